// spurcast: the command-line front end. Parses arguments, calls the core, prints and writes;
// every core Error is caught here once and mapped to exit code 2, or 3 when it is an OutputError.
#include <CLI/CLI.hpp>

#include <cstdio>
#include <iostream>
#include <string>
#include <new>

#include "cli/commands.hpp"
#include "cli/process_memory.hpp"
#include "core/input/error.hpp"
#include "core/output/output_dir.hpp"

int main(int argc, char** argv) {
  spurcast::cli::keep_freed_memory_for_reuse();
  CLI::App app{"spurcast: conducted and broadcast-band EMI estimates for switching converters"};
  app.set_version_flag("--version", std::string("spurcast ") + SPURCAST_VERSION);
  app.require_subcommand(1);
  spurcast::cli::CommandList commands;
  spurcast::cli::register_commands(app, commands);
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    if (e.get_exit_code() == 0) return app.exit(e);  // --help, --version
    // One line, like every other error (issue 14: CLI11 adds a second line of its own).
    std::string message = e.what();
    for (char& c : message) {
      if (c == '\n') c = ' ';
    }
    std::cerr << "spurcast: error: " << message << " (see --help)\n";
    return spurcast::cli::exit_bad_input;
  }
  try {
    for (auto& command : commands) {
      if (command.app->parsed()) return command.run();
    }
  } catch (const spurcast::OutputError& e) {
    std::cerr << "spurcast: error: " << e.what() << "\n";
    return spurcast::cli::exit_output_failed;
  } catch (const spurcast::Error& e) {
    std::cerr << "spurcast: error: " << e.what() << "\n";
    return spurcast::cli::exit_bad_input;
  } catch (const std::bad_alloc&) {
    // A last resort: every size derived from the input is checked against a stated bound before
    // it is allocated (issue 14), so reaching this is a defect to report with the input.
    std::cerr << "spurcast: error: out of memory: the input asks for more memory than is available (please report "
                 "it: its size should have been refused with the bound)\n";
    return spurcast::cli::exit_bad_input;
  } catch (const std::exception& e) {
    std::cerr << "spurcast: error: " << e.what() << "\n";
    return spurcast::cli::exit_bad_input;
  }
  return spurcast::cli::exit_bad_input;
}

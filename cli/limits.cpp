// spurcast limits: list the shipped limit-line files, or validate the given ones.
#include <filesystem>
#include <iostream>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "core/input/error.hpp"
#include "core/compliance/limits.hpp"
#include "core/output/listing_output.hpp"

namespace spurcast::cli {

namespace {

struct Options {
  std::vector<std::string> files;
  bool json = false;
};

int run_limits(const Options& options) {
  const ShippedData data = locate_shipped_data();
  if (options.files.empty()) {
    const auto files = shipped_limit_files(data);
    std::vector<LimitSet> sets;
    if (!options.json) std::cout << "shipped limit files (" << data.limits_directory() << "):\n";
    for (const std::string& file : files) {
      const LimitSet set = read_limit_file(file);
      if (options.json) {
        sets.push_back(set);
      } else {
        std::cout << limit_set_text(set, std::filesystem::path(file).stem().string());
      }
    }
    if (options.json) std::cout << limit_sets_json(sets);
    return exit_ok;
  }
  // Validate every given file; report each bad one, exit 2 if any.
  int status = exit_ok;
  std::vector<LimitSet> sets;
  for (const std::string& name : options.files) {
    try {
      const auto path = resolve_limit_file(name, ".", data);
      if (!path) throw Error("cannot find limit file \"" + name + "\" here or in " + data.limits_directory());
      const LimitSet set = read_limit_file(*path);
      if (options.json) {
        sets.push_back(set);
      } else {
        std::cout << limit_set_text(set, *path + ": ok");
      }
    } catch (const Error& e) {
      std::cerr << "spurcast: error: " << e.what() << "\n";
      status = exit_bad_input;
    }
  }
  if (options.json && status == exit_ok) std::cout << limit_sets_json(sets);
  return status;
}

}  // namespace

void setup_limits(CLI::App& app, CommandList& commands) {
  auto options = std::make_shared<Options>();
  CLI::App* sub = app.add_subcommand("limits", "list the shipped limit-line files, or validate the given ones");
  sub->add_option("files", options->files, "limit-line files (TOML) to validate; none = list the shipped files");
  sub->add_flag("--json", options->json, "print JSON instead of text");
  commands.push_back(Command{sub, [options] { return run_limits(*options); }});
}

}  // namespace spurcast::cli

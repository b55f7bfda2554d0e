#pragma once
// The subcommands of the spurcast executable. Each lives in cli/<command>.cpp with an Options
// struct, a setup_<command>() that declares its options, and a run function.
#include <CLI/CLI.hpp>

#include <functional>
#include <memory>
#include <vector>

namespace spurcast::cli {

// Exit codes (docs/design.md §4).
inline constexpr int exit_ok = 0;            // done, every limit met
inline constexpr int exit_limit_exceeded = 1;  // done, a limit exceeded or a margin under the guard band
inline constexpr int exit_bad_input = 2;     // bad input or usage
// An output could not be written: the target is not spurcast's to replace, a write failed, or
// another run writes the same target. Apart from 2 so that a script can tell "fix the input" from
// "fix where the output goes"; nothing is half-written in either case.
inline constexpr int exit_output_failed = 3;

struct Command {
  CLI::App* app = nullptr;
  std::function<int()> run;
};
using CommandList = std::vector<Command>;

/// The check of every --threads option: 1..max_worker_threads (core/chain/sweep.hpp).
[[nodiscard]] CLI::Validator thread_count_check();

/// Registers every subcommand on `app`; the run function of the parsed one is called by main.
void register_commands(CLI::App& app, CommandList& commands);

// One per subcommand; each adds itself to `commands`.
void setup_spectrum(CLI::App& app, CommandList& commands);
void setup_compare(CLI::App& app, CommandList& commands);
void setup_limits(CLI::App& app, CommandList& commands);
void setup_sweep(CLI::App& app, CommandList& commands);
void setup_predict(CLI::App& app, CommandList& commands);
void setup_demo(CLI::App& app, CommandList& commands);
void setup_bands(CLI::App& app, CommandList& commands);
void setup_scan(CLI::App& app, CommandList& commands);
void setup_sensitivity(CLI::App& app, CommandList& commands);
void setup_design_filter(CLI::App& app, CommandList& commands);
void setup_serve(CLI::App& app, CommandList& commands);

}  // namespace spurcast::cli

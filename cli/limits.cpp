// spurcast limits: list the shipped limit-line files, or validate the given ones.
#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include <filesystem>
#include <iostream>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "core/input/error.hpp"
#include "core/compliance/limits.hpp"
#include "core/input/units.hpp"

namespace spurcast::cli {

namespace {

struct Options {
  std::vector<std::string> files;
  bool json = false;
};

std::string range_text(const LimitSet& set) {
  double low = 0.0;
  double high = 0.0;
  for (const LimitLine& line : set.lines) {
    if (low == 0.0 || line.low_hz() < low) low = line.low_hz();
    high = std::max(high, line.high_hz());
  }
  return format_quantity(low, Dimension::frequency) + " to " + format_quantity(high, Dimension::frequency);
}

std::string detectors_text(const LimitSet& set) {
  std::string text;
  for (const LimitLine& line : set.lines) text += (text.empty() ? "" : ", ") + to_string(line.detector);
  return text;
}

nlohmann::json set_json(const LimitSet& set) {
  nlohmann::json lines = nlohmann::json::array();
  for (const LimitLine& line : set.lines) {
    nlohmann::json segments = nlohmann::json::array();
    for (const LimitSegment& s : line.segments) {
      segments.push_back({{"from_hz", s.from_hz}, {"to_hz", s.to_hz}, {"start", s.start_level}, {"end", s.end_level}});
    }
    lines.push_back({{"detector", to_string(line.detector)},
                     {"at_boundary", line.at_boundary == BoundaryRule::lower ? "lower" : "higher"},
                     {"segments", segments}});
  }
  nlohmann::json j{{"file", set.file},
                   {"name", set.name},
                   {"measures", to_string(set.measures)},
                   {"unit", limit_unit_symbol(set)},
                   {"source", set.source},
                   {"confidence", set.confidence_text},
                   {"lines", lines}};
  j["distance_m"] = set.distance_m ? nlohmann::json(*set.distance_m) : nlohmann::json(nullptr);
  return j;
}

void print_set(const LimitSet& set, const std::string& shown_name) {
  std::cout << fmt::format("{}\n  {}: {}, {}{}; {}; {}\n  source: {}\n  confidence: {}\n", shown_name, set.name,
                           to_string(set.measures), limit_unit_symbol(set),
                           set.distance_m ? " at " + format_quantity(*set.distance_m, Dimension::length) : "",
                           detectors_text(set), range_text(set), set.source, set.confidence_text);
}

int run_limits(const Options& options) {
  if (options.files.empty()) {
    const auto files = shipped_limit_files();
    nlohmann::json list = nlohmann::json::array();
    if (!options.json) std::cout << "shipped limit files (" << shipped_limits_directory() << "):\n";
    for (const std::string& file : files) {
      const LimitSet set = read_limit_file(file);
      if (options.json) {
        list.push_back(set_json(set));
      } else {
        print_set(set, std::filesystem::path(file).stem().string());
      }
    }
    if (options.json) std::cout << list.dump(2) << "\n";
    return exit_ok;
  }
  // Validate every given file; report each bad one, exit 2 if any.
  int status = exit_ok;
  nlohmann::json list = nlohmann::json::array();
  for (const std::string& name : options.files) {
    try {
      const auto path = resolve_limit_file(name, ".");
      if (!path) throw Error("cannot find limit file \"" + name + "\" here or in " + shipped_limits_directory());
      const LimitSet set = read_limit_file(*path);
      if (options.json) {
        list.push_back(set_json(set));
      } else {
        print_set(set, *path + ": ok");
      }
    } catch (const Error& e) {
      std::cerr << "spurcast: error: " << e.what() << "\n";
      status = exit_bad_input;
    }
  }
  if (options.json && status == exit_ok) std::cout << list.dump(2) << "\n";
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

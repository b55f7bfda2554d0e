#include "cli/terminal.hpp"

#include <unistd.h>

#include <cstdio>
#include <cstdlib>
#include <iostream>

#include "cli/commands.hpp"
#include "core/input/error.hpp"
#include "core/output/output_dir.hpp"
#include "core/output/prediction_text.hpp"
#include "core/output/report.hpp"

namespace spurcast::cli {

bool stdout_wants_colour() {
  const char* no_colour = std::getenv("NO_COLOR");
  if (no_colour != nullptr && no_colour[0] != '\0') return false;
  return ::isatty(STDOUT_FILENO) == 1;
}

bool stderr_is_terminal() { return ::isatty(STDERR_FILENO) == 1; }

Progress::Progress() : enabled_(stderr_is_terminal()) {}
Progress::~Progress() { clear(); }

void Progress::show(const std::string& stage, double fraction) {
  if (!enabled_) return;
  std::string line = "spurcast: " + stage;
  if (fraction >= 0.0 && fraction <= 1.0) {
    char percent[16];
    std::snprintf(percent, sizeof percent, " %3.0f %%", fraction * 100.0);
    line += percent;
  }
  const std::size_t width = display_width(line);
  std::string erase = width < shown_width_ ? std::string(shown_width_ - width, ' ') : "";
  std::cerr << "\r" << line << erase << std::flush;
  shown_width_ = width;
}

void Progress::clear() {
  if (!enabled_ || shown_width_ == 0) return;
  std::cerr << "\r" << std::string(shown_width_, ' ') << "\r" << std::flush;
  shown_width_ = 0;
}

int write_report_and_summarise(const Prediction& prediction, const std::string& directory, bool json) {
  Progress progress;
  progress.show("writing the report");
  const std::vector<OutputFile> files = report_files(prediction);
  write_output_directory(directory, files);
  progress.clear();
  if (json) {
    for (const OutputFile& f : files) {
      if (f.name == "summary.json") std::cout << f.content;
    }
  } else {
    std::cout << prediction_summary(prediction, directory, stdout_wants_colour());
  }
  // no limits: nothing was claimed, so nothing failed (exit 0); incomplete exits like a failure.
  const bool ok = prediction.verdict == Verdict::pass || prediction.verdict == Verdict::no_limits;
  return ok ? exit_ok : exit_limit_exceeded;
}

}  // namespace spurcast::cli

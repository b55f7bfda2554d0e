#pragma once
// The terminal side of the CLI: colour only when stdout is a terminal and NO_COLOR is unset, a
// progress line on stderr only when stderr is a terminal, and writing a report folder followed by
// its summary (the text itself is core/output/prediction_text.hpp).
#include <cstddef>
#include <string>

#include "core/chain/prediction.hpp"
#include "core/output/text_table.hpp"

namespace spurcast::cli {

/// True when stdout is a terminal (isatty) and NO_COLOR is absent or empty (no-color.org).
[[nodiscard]] bool stdout_wants_colour();
/// True when stderr is a terminal.
[[nodiscard]] bool stderr_is_terminal();

/// A progress line on stderr ("spurcast: scanning band B ... 40 %"), redrawn in place; silent unless
/// stderr is a terminal. The line is cleared on destruction.
class Progress {
 public:
  Progress();
  ~Progress();
  Progress(const Progress&) = delete;
  Progress& operator=(const Progress&) = delete;
  /// Shows `stage`, with a percentage when 0 <= fraction <= 1.
  void show(const std::string& stage, double fraction = -1.0);
  void clear();

 private:
  bool enabled_ = false;
  std::size_t shown_width_ = 0;
};

/// What `predict` and `demo` share after the prediction: write the report folder, print the summary
/// (or summary.json with `json`), and return the exit code (0 pass, 1 marginal or fail). The test
/// hook SPURCAST_TEST_ABORT_AFTER_FILES=N (environment) stops the process after N files.
[[nodiscard]] int write_report_and_summarise(const Prediction& prediction, const std::string& directory, bool json);

}  // namespace spurcast::cli

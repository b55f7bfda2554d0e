#pragma once
/// The terminal summary of a prediction, as `predict` and `demo` print it after writing the report
/// folder: verdict, worst margin per detector of the limit line, the five worst frequencies, the
/// broadcast-band verdicts, and where the report is.
///
/// Example:
///   std::cout << prediction_summary(predict(scenario), "spurcast-report", false);
#include <string>

#include "core/chain/prediction.hpp"

namespace spurcast {

/// The summary text (lines ending in '\n'). `directory` is the report folder as the user named it;
/// `colour` adds ANSI colours (verdicts green / yellow / red, the title bold).
[[nodiscard]] std::string prediction_summary(const Prediction& prediction, const std::string& directory, bool colour);

}  // namespace spurcast

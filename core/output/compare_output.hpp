#pragma once
/// The writers of a CompareResult (core/compliance/trace_comparison.hpp): JSON and the terminal
/// text. The margins CSV of docs/design.md §4 is margins_csv(result.report)
/// (core/compliance/margins.hpp), the same rows the report writes.
///
/// Example:
///   std::cout << compare_text(result, {"margins.csv"});
#include <string>
#include <vector>

#include "core/compliance/trace_comparison.hpp"

namespace spurcast {

/// The comparison as a JSON object (2-space indent, ending in a newline): verdict, guard, trace,
/// corrections, limits, worst margin per detector, worst and closest rows, counts, re-measure
/// points, the prediction beside them (with a prediction file) and `files` = `written`.
[[nodiscard]] std::string compare_json(const CompareResult& result, const std::vector<std::string>& written);

/// The terminal text: inputs and their sources, worst margin per line detector, the closest
/// readings, what to re-measure, the prediction beside it, the verdict, "wrote FILE" for each of
/// `written`, and the reminder that a pre-scan is not a compliance result.
[[nodiscard]] std::string compare_text(const CompareResult& result, const std::vector<std::string>& written);

}  // namespace spurcast

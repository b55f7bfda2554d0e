// libFuzzer target: the measured-trace CSV loaders (core/compliance/trace.hpp) over text in memory.
// The first byte picks the parser (trace with unit from the header / forced dBuV / forced dBm / a
// named level column, correction table, scan CSV); the rest is the file, so the loaders' delimiter
// choice, decimal commas, metadata lines before the header (with their RBW) and header units are
// all reached from the text. Only spurcast::Error may leave a loader; a loaded trace must have
// strictly increasing finite frequencies, finite levels and a finite positive RBW when one was
// read, and the sweep-step check over it must stay within its step count.
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <string_view>
#include <vector>

#include "core/compliance/prescan.hpp"
#include "core/compliance/trace.hpp"
#include "core/input/error.hpp"

namespace {

void check_axis(const std::vector<double>& frequency_hz, const std::vector<double>& values) {
  if (frequency_hz.size() != values.size()) std::abort();
  for (std::size_t i = 0; i < frequency_hz.size(); ++i) {
    if (!std::isfinite(frequency_hz[i]) || !std::isfinite(values[i])) std::abort();
    if (i > 0 && !(frequency_hz[i] > frequency_hz[i - 1])) std::abort();
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size < 1) return 0;
  const std::string_view text(reinterpret_cast<const char*>(data + 1), size - 1);
  try {
    switch (data[0] % 6) {
      case 0: {
        const spurcast::MeasuredTrace trace = spurcast::parse_trace_csv(text, "fuzz.csv");
        check_axis(trace.frequency_hz, trace.level_dbuv);
        if (trace.rbw_hz && !(std::isfinite(*trace.rbw_hz) && *trace.rbw_hz > 0.0)) std::abort();
        const spurcast::SweepStepCheck sweep = spurcast::check_sweep_step(trace);
        if (sweep.wider_than_rbw > sweep.steps || sweep.steps + 1 != trace.frequency_hz.size())
          std::abort();
        break;
      }
      case 1: {
        const auto trace = spurcast::parse_trace_csv(text, "fuzz.csv", spurcast::TraceUnit::dbuv);
        check_axis(trace.frequency_hz, trace.level_dbuv);
        break;
      }
      case 2: {
        const auto trace = spurcast::parse_trace_csv(text, "fuzz.csv", spurcast::TraceUnit::dbm);
        check_axis(trace.frequency_hz, trace.level_dbuv);
        break;
      }
      case 3: {
        const auto trace = spurcast::parse_trace_csv(text, "fuzz.csv", std::nullopt, "level");
        check_axis(trace.frequency_hz, trace.level_dbuv);
        break;
      }
      case 4: {
        const spurcast::CorrectionTable table = spurcast::parse_correction_csv(text, "fuzz.csv");
        check_axis(table.frequency_hz, table.correction_db);
        if (!table.frequency_hz.empty()) {
          const double f_hz = table.frequency_hz.front() * 1.5;
          if (!std::isfinite(table.at(f_hz))) std::abort();
        }
        break;
      }
      default: {
        const auto rows = spurcast::parse_scan_csv(text, "fuzz.csv");
        for (std::size_t i = 0; i < rows.size(); ++i) {
          if (!std::isfinite(rows[i].frequency_hz)) std::abort();
        }
        break;
      }
    }
  } catch (const spurcast::Error&) {
  }
  return 0;
}

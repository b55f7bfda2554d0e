// libFuzzer target: the capture CSV loader (core/source/capture.hpp, parse_capture_text) over text in memory.
// The first byte picks the interpretation (value column by index or by header name, time column,
// resampling, quantity), the rest is the file. Only spurcast::Error may leave the loader; a loaded
// record must have at least 2 finite samples and a finite, positive sample interval.
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <string_view>

#include "core/source/capture.hpp"
#include "core/input/error.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size < 1) return 0;
  const std::uint8_t mode = data[0];
  const std::string_view text(reinterpret_cast<const char*>(data + 1), size - 1);
  spurcast::CaptureSpec spec;
  spec.file = "fuzz.csv";
  spec.resample = (mode & 1) != 0;
  spec.quantity = (mode & 2) != 0 ? spurcast::Quantity::current : spurcast::Quantity::voltage;
  switch ((mode >> 2) & 3) {
    case 0: break;  // defaults: time in column 1, values in column 2
    case 1: spec.column = spurcast::ColumnChoice::by_name("CH1"); break;
    case 2: spec.column = spurcast::ColumnChoice::by_index(3); break;
    case 3: spec.time_column = spurcast::ColumnChoice::by_name("Time (us)"); break;
  }
  if ((mode & 16) != 0) spec.scale = -10.0;
  spurcast::CaptureLoadOptions options;
  options.threads = 1 + ((mode >> 5) & 1);  // records under 1 MB use one chunk either way
  spurcast::Capture capture;
  try {
    capture = spurcast::parse_capture_text(text, "fuzz.csv", spec, options);
  } catch (const spurcast::Error&) {
    return 0;
  }
  const auto& samples = capture.waveform.samples;
  if (samples.size() < 2) std::abort();
  const double rate_hz = capture.waveform.sample_rate_hz;
  // Finite and positive: a time step under 1 fs (a subnormal one would make the rate infinite)
  // is refused by the loader (tests/data/fuzz-regressions/capture/subnormal-interval-infinite-rate).
  if (!(rate_hz > 0.0) || !std::isfinite(rate_hz)) std::abort();
  for (const double v : samples) {
    if (!std::isfinite(v)) std::abort();
  }
  return 0;
}

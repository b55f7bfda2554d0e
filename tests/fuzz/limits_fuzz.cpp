// libFuzzer target: the limit-line file loader (core/compliance/limits.hpp, parse_limit_text) over TOML text in
// memory. Only spurcast::Error may leave it; on success every line is evaluated across its range,
// which must give finite levels (a loader must not accept a line it cannot evaluate).
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <string_view>

#include "core/input/error.hpp"
#include "core/compliance/limits.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  spurcast::LimitSet set;
  try {
    set = spurcast::parse_limit_text(text, "fuzz.toml");
  } catch (const spurcast::Error&) {
    return 0;
  }
  for (const spurcast::LimitLine& line : set.lines) {
    for (const spurcast::LimitSegment& segment : line.segments) {
      const double middle_hz = std::sqrt(segment.from_hz * segment.to_hz);
      for (const double f_hz : {segment.from_hz, middle_hz, segment.to_hz}) {
        const auto level = line.level_at(f_hz);
        if (level && !std::isfinite(*level)) std::abort();
      }
    }
  }
  return 0;
}

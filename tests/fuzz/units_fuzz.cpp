// libFuzzer target: the SI quantity parser (core/input/units.hpp). The first byte picks the Dimension, the
// rest is the text. Contract checked beyond "no crash": a parse either throws spurcast::Error or
// returns a finite value, and format_quantity of that value parses back in the same dimension
// (for |value| <= 1e300).
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <string_view>

#include "core/input/error.hpp"
#include "core/input/units.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size < 1) return 0;
  constexpr int dimension_count = static_cast<int>(spurcast::Dimension::number) + 1;
  const auto dimension = static_cast<spurcast::Dimension>(data[0] % dimension_count);
  const std::string_view text(reinterpret_cast<const char*>(data + 1), size - 1);
  double value = 0.0;
  try {
    value = spurcast::parse_quantity(text, dimension);
  } catch (const spurcast::Error&) {
    return 0;  // a clear refusal is the expected outcome for most inputs
  }
  if (!std::isfinite(value)) std::abort();  // a loader must never receive inf or nan
  // The round trip holds for any magnitude a circuit can have; near DBL_MAX the 4-digit rounding of
  // format_quantity (or the ×100 of a fraction) overflows, which is not worth a rule.
  if (std::fabs(value) > 1e300) return 0;
  const std::string formatted = spurcast::format_quantity(value, dimension);
  try {
    (void)spurcast::parse_quantity(formatted, dimension);
  } catch (const spurcast::Error&) {
    std::abort();  // our own output must be readable input
  }
  return 0;
}

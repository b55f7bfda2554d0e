// libFuzzer target: the SPICE subcircuit reader (core/coupling/spice.hpp), asked for subcircuit
// "f". Contract checked beyond "no crash": a parse either throws spurcast::Error or gives at least
// one element, each R, L, C or K with a finite value > 0, two node names that differ, and for K a
// coupling factor in [0, 1).
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <string_view>

#include "core/coupling/spice.hpp"
#include "core/input/error.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  std::vector<spurcast::NetlistElement> elements;
  try {
    elements = spurcast::parse_spice_subcircuit(text, "fuzz.cir", "f");
  } catch (const spurcast::Error&) {
    return 0;
  }
  if (elements.empty()) std::abort();
  for (const auto& e : elements) {
    if (e.type != 'R' && e.type != 'L' && e.type != 'C' && e.type != 'K') std::abort();
    if (!(std::isfinite(e.value) && e.value > 0.0) || e.from.empty() || e.to.empty() ||
        e.from == e.to)
      std::abort();
    if (e.type == 'K' && !(e.coupling >= 0.0 && e.coupling < 1.0 && e.value_2 > 0.0)) std::abort();
  }
  return 0;
}

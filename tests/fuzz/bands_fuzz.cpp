// libFuzzer target: the broadcast band-plan loader (core/radio/bands.hpp, parse_band_plan) over TOML text in
// memory. Only spurcast::Error may leave it; on success each band's channel raster is expanded, which
// must stay bounded (a plan that asks for billions of channels must be refused by the loader).
#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <string>

#include "core/radio/bands.hpp"
#include "core/input/error.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  spurcast::BandPlan plan;
  try {
    plan = spurcast::parse_band_plan(text, "fuzz.toml");
  } catch (const spurcast::Error&) {
    return 0;
  }
  for (const spurcast::Band& band : plan.bands) {
    // Channel counts are checked by the loader against the band width; a pathological raster
    // (1 Hz over 1 THz) would show up here as a hang or an out-of-memory, which libFuzzer reports.
    (void)band.channel_centres_hz();
  }
  return 0;
}

// libFuzzer target: the scenario loader (core/chain/scenario.hpp) over TOML text in memory. Every section
// reader is reached through it (switching, capture, coupling, filter, lisn, receiver, limits,
// broadcast). Only spurcast::Error may leave the loader; anything else (a std::out_of_range from a
// helper, a toml++ exception that was not converted) aborts so libFuzzer records the input.
#include <cstddef>
#include <cstdint>
#include <string_view>

#include "core/input/error.hpp"
#include "core/chain/scenario.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  // Shipped names resolve in the build folder's copy of the data (looked up once per process).
  static const spurcast::ShippedData shipped = spurcast::locate_shipped_data();
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  try {
    // A folder that does not exist: relative file names in the input resolve to nothing.
    (void)spurcast::scenario_from_text(text, "fuzz.toml", "/nonexistent-spurcast-fuzz", shipped);
  } catch (const spurcast::Error&) {
  }
  return 0;
}

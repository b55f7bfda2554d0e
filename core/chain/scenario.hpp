#pragma once
/// The scenario file (TOML, docs/design.md §5): every input of a prediction. Each section is read by the
/// module that owns it (source, capture, conducted, filter, lisn, receiver, limits, bands); this
/// loader checks the top level, dispatches, and keeps file positions for every error.
///
/// Example:
///   const Scenario s = load_scenario("examples/greenhouse-buck.toml", locate_shipped_data());
///   if (s.switching) { ... }  // a described source; otherwise s.capture names a capture file
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "core/input/shipped_data.hpp"
#include "core/input/toml.hpp"

#include "core/radio/bands.hpp"
#include "core/radio/product.hpp"
#include "core/source/capture.hpp"
#include "core/coupling/conducted.hpp"
#include "core/coupling/converter.hpp"
#include "core/coupling/filter.hpp"
#include "core/compliance/limits.hpp"
#include "core/compliance/touch_current.hpp"
#include "core/coupling/input_stability.hpp"
#include "core/coupling/lisn.hpp"
#include "core/receiver/receiver.hpp"
#include "core/source/source.hpp"

namespace spurcast {

struct Scenario {
  std::string title;
  std::string description;
  std::string file;       ///< the scenario file as named (for messages and the report)
  std::string directory;  ///< folder that relative paths in the scenario are taken from
  ShippedData data;       ///< where shipped names (limit files, band plans) were resolved
  std::optional<SwitchingSpec> switching;  ///< [switching]: a described source
  std::optional<CaptureSpec> capture;      ///< [capture]: a captured waveform instead
  CouplingSpec coupling;                   ///< [coupling]
  bool has_coupling = false;               ///< whether [coupling] was given
  ConverterSpec converter;                 ///< [converter] (buck when absent); its ripple is in switching
  std::vector<FilterStage> filters;        ///< [[filter]], listed from the LISN side
  LisnSpec lisn;                           ///< [lisn]
  ReceiverSpec receiver;                   ///< [receiver]
  LimitsSpec limits;                       ///< [limits]
  BroadcastSpec broadcast;                 ///< [broadcast]
  SupplySpec supply;                       ///< [supply]
  BoardSpec board;                         ///< [board]
  ConverterPowerSpec converter_power;      ///< [converter] min_input_voltage, output_power
  SafetySpec safety;                       ///< [safety] (defaults when absent; safety.given says)
};

/// The top-level keys a scenario may hold.
[[nodiscard]] const std::vector<std::string>& scenario_sections();

/// Reads and checks a scenario file; shipped names (limit files, band plans) resolve in `data`.
/// Errors carry file:line:column.
[[nodiscard]] Scenario load_scenario(const std::string& path, const ShippedData& data);
/// The same from parsed TOML (used by the sweep, which edits the table and re-reads it).
/// `file` names the source in messages; `directory` resolves relative paths.
[[nodiscard]] Scenario scenario_from_table(const toml::table& table, const std::string& file,
                                           const std::string& directory, const ShippedData& data);
/// The same from TOML text (tests, the built-in demo).
[[nodiscard]] Scenario scenario_from_text(std::string_view text, const std::string& name,
                                          const std::string& directory, const ShippedData& data);

}  // namespace spurcast

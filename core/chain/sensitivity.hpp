#pragma once
/// Sensitivities (docs/design.md §4, `spurcast sensitivity`): how much each numeric scenario value
/// moves the worst readings. For the worst reading of each detector against the limits, and for the
/// worst channel of each broadcast band, the change in dB when one value is raised by 10 %, by
/// finite differences of the exact chain: the scenario table is copied, the one key is written
/// ×1.1 with set_scenario_key() (core/chain/sweep.hpp, the machinery of `sweep --vary`), re-read by
/// scenario_from_table() (so every section's checks apply) and re-run through predict(). The
/// figure is read at the base worst frequency (the same tuned frequency or channel), so it means
/// "this peak moves by X dB", and gives the same number as two `predict` runs; when the worst
/// reading moves to another frequency after the change, that is stated too. Keys are run in
/// parallel, one predict() per key.
///
/// Only described sources without dither: a dithered or captured source goes through the
/// time-domain receiver (seconds to minutes per run), so it is refused rather than run once per
/// key.
///
/// Example:
///   const toml::table table = parse_toml_file("examples/greenhouse-buck.toml", "scenario file");
///   const SensitivityResult r = run_sensitivity(table, "examples/greenhouse-buck.toml",
///   "examples", {}); for (const Sensitivity& s : r.sensitivities) ... s.key,
///   r.targets[s.target].frequency_hz, *s.db_per_10_percent
#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "core/chain/prediction.hpp"
#include "core/input/shipped_data.hpp"
#include "core/input/toml.hpp"
#include "core/input/units.hpp"
#include "core/receiver/detector.hpp"

namespace spurcast {

/// The relative step of every key: +10 %.
inline constexpr double sensitivity_step_fraction = 0.10;

/// One quantity whose change is measured: a detector's worst reading or a band's worst channel.
struct SensitivityTarget {
  std::optional<Detector> detector;  ///< set for a detector's worst reading against the limits
  std::string band;                  ///< broadcast band name, for a band's worst channel
  double frequency_hz = 0.0;         ///< tuned frequency or channel centre of the base worst [Hz]
  double level = 0.0;                ///< base reading [dBµV | dBµA] or channel field [dBµV/m]
  std::string unit;                  ///< "dBµV", "dBµA" or "dBµV/m"
  std::optional<double> margin_db;   ///< base margin to the limit (detector targets)
  std::string limit_label;           ///< the limit line of the worst margin (detector targets)

  /// "quasi-peak" or "band MW".
  [[nodiscard]] std::string label() const;
};

/// One numeric scenario value the sensitivities are taken over.
struct SensitivityKey {
  std::string
      key;  ///< dotted scenario key ("coupling.parasitic_capacitance", "filter.1.inductance")
  std::string value_text;  ///< the value as written in the scenario ("35 pF", "0.25")
  double value_si = 0.0;   ///< in SI base units (a fraction as a plain ratio)
  Dimension dimension = Dimension::number;
};

/// The change of one target for +10 % of one key.
struct Sensitivity {
  std::size_t key = 0;     ///< index into SensitivityResult::keys
  std::size_t target = 0;  ///< index into SensitivityResult::targets
  /// [dB] reading after − reading before, at the target's frequency; nullopt when there is no
  /// reading there after the change (see `note`).
  std::optional<double> db_per_10_percent;
  /// Set when the worst reading of this detector (worst channel of this band) is at another
  /// frequency after the change [Hz], with its level after the change.
  std::optional<double> worst_frequency_after_hz;
  std::optional<double> worst_level_after;
  std::string note;  ///< why db_per_10_percent is missing
};

/// A key whose +10 % the scenario's checks (or the chain) reject.
struct InvalidKey {
  std::size_t key = 0;  ///< index into SensitivityResult::keys
  std::string message;  ///< the error of the changed scenario
};

/// A key left out, with the reason.
struct SkippedKey {
  std::string key;
  std::string reason;
};

struct SensitivityOptions {
  /// Worker threads; 0 = sweep_thread_count(getenv("SPURCAST_THREADS")).
  unsigned threads = 0;
};

struct SensitivityResult {
  std::string scenario_file;
  double step_fraction = sensitivity_step_fraction;
  std::vector<SensitivityTarget> targets;  ///< detectors (order peak, QP, AV), then bands
  std::vector<SensitivityKey> keys;        ///< numeric keys, in the scenario's key order
  /// Every (key, target) of a valid key, grouped by target (in the order of `targets`) and within
  /// a target ranked by |db_per_10_percent| (largest first); those without a figure last.
  std::vector<Sensitivity> sensitivities;
  std::vector<InvalidKey> invalid;
  std::vector<SkippedKey> skipped;
  std::vector<std::string> notes;
  unsigned threads = 1;
};

/// Every numeric key of `table` (quantities and plain floating-point numbers, inside sections,
/// inline tables and arrays of tables with 1-based indices) and the keys left out with the reason:
/// integers (counts and choices such as lisn.lines, broadcast.region), true/false switches, text
/// (names, file names, models), lists of values, levels in dB (a logarithm: +10 % of it is no
/// proportional change), and zeros (+10 % of 0 is 0). `title` and `description` are left out
/// silently.
void list_sensitivity_keys(const toml::table& table, std::vector<SensitivityKey>& keys,
                           std::vector<SkippedKey>& skipped);

/// Runs the base prediction and one per numeric key. Errors: the base scenario's own error; for a
/// dithered or captured source `sensitivity needs a described source without dither: a dithered or
/// captured source goes through the time-domain receiver, too slow to re-run for every key`; when
/// there is neither a limit nor a broadcast band: `nothing to take sensitivities of: the scenario
/// gives no limit line and no broadcast band`.
[[nodiscard]] SensitivityResult run_sensitivity(const toml::table& table, const std::string& file,
                                                const std::string& directory, const ShippedData& data,
                                                const SensitivityOptions& options);

}  // namespace spurcast

#include "core/output/sensitivity_output.hpp"

#include <fmt/format.h>

#include <cmath>
#include <nlohmann/json.hpp>
#include <vector>

#include "core/input/units.hpp"
#include "core/output/text_table.hpp"

namespace spurcast {

namespace {

/// Figures are shown with 2 decimals: smaller changes read as 0.00 and are counted, not listed.
constexpr double shown_resolution_db = 0.005;

std::string frequency_text(double hz) { return format_quantity(hz, Dimension::frequency, 4); }

/// The unit of `value_si`: a fraction ("25 %") is given as its plain ratio (0.25), so it has no
/// unit, like a plain number; "%" would misread 0.25 as a quarter of a percent.
std::string unit_of(const SensitivityKey& key) {
  if (key.dimension == Dimension::number || key.dimension == Dimension::fraction) return "";
  return unit_symbol(key.dimension);
}

}  // namespace

std::string sensitivity_json(const SensitivityResult& result) {
  using nlohmann::ordered_json;
  auto optional_number = [](const std::optional<double>& v) {
    return v ? ordered_json(*v) : ordered_json(nullptr);
  };
  ordered_json j;
  j["scenario"] = result.scenario_file;
  j["step_percent"] = 100.0 * result.step_fraction;
  j["targets"] = ordered_json::array();
  for (const SensitivityTarget& t : result.targets) {
    ordered_json o;
    if (t.detector) {
      o["detector"] = to_string(*t.detector);
    } else {
      o["band"] = t.band;
    }
    o["frequency_hz"] = t.frequency_hz;
    o["level"] = t.level;
    o["unit"] = t.unit;
    if (t.detector) {
      o["margin_db"] = optional_number(t.margin_db);
      o["limit"] = t.limit_label;
    }
    j["targets"].push_back(o);
  }
  j["sensitivities"] = ordered_json::array();
  for (const Sensitivity& s : result.sensitivities) {
    const SensitivityKey& key = result.keys[s.key];
    const SensitivityTarget& t = result.targets[s.target];
    ordered_json o;
    o["key"] = key.key;
    o["value"] = key.value_text;
    o["value_si"] = key.value_si;
    o["unit"] = unit_of(key);
    o["frequency_hz"] = t.frequency_hz;
    if (t.detector) {
      o["detector"] = to_string(*t.detector);
    } else {
      o["band"] = t.band;
    }
    o["db_per_10_percent"] = optional_number(s.db_per_10_percent);
    o["worst_frequency_after_hz"] = optional_number(s.worst_frequency_after_hz);
    o["worst_level_after"] = optional_number(s.worst_level_after);
    if (!s.note.empty()) o["note"] = s.note;
    j["sensitivities"].push_back(o);
  }
  j["invalid"] = ordered_json::array();
  for (const InvalidKey& k : result.invalid) {
    j["invalid"].push_back({{"key", result.keys[k.key].key},
                            {"value", result.keys[k.key].value_text},
                            {"message", k.message}});
  }
  j["skipped"] = ordered_json::array();
  for (const SkippedKey& k : result.skipped)
    j["skipped"].push_back({{"key", k.key}, {"reason", k.reason}});
  j["threads"] = result.threads;
  j["notes"] = result.notes;
  return j.dump(2) + "\n";
}

std::string sensitivity_text(const SensitivityResult& result) {
  std::string out = fmt::format(
      "sensitivities of {}: the change of each worst reading per +{:g} % of one value\n\n",
      result.scenario_file, 100.0 * result.step_fraction);
  out += "worst readings:\n";
  std::vector<std::vector<std::string>> rows;
  for (const SensitivityTarget& t : result.targets) {
    std::vector<std::string> row{t.label(), frequency_text(t.frequency_hz),
                                 fmt::format("{:.1f} {}", t.level, t.unit)};
    if (t.margin_db)
      row.push_back(fmt::format("margin {:.1f} dB to {}", *t.margin_db, t.limit_label));
    rows.push_back(row);
  }
  out += format_columns(rows, {2});

  // One group per reading, ranked by size; figures under the shown resolution are counted, not
  // listed.
  for (std::size_t t = 0; t < result.targets.size(); ++t) {
    const SensitivityTarget& target = result.targets[t];
    out += fmt::format("\n{} at {}, ranked by size:\n", target.label(),
                       frequency_text(target.frequency_hz));
    rows.clear();
    std::size_t unchanged = 0;
    for (const Sensitivity& s : result.sensitivities) {
      if (s.target != t) continue;
      if (s.db_per_10_percent && std::abs(*s.db_per_10_percent) < shown_resolution_db &&
          !s.worst_frequency_after_hz) {
        ++unchanged;
        continue;
      }
      const SensitivityKey& key = result.keys[s.key];
      std::vector<std::string> row{
          key.key, key.value_text,
          s.db_per_10_percent ? fmt::format("{:+.1f} dB per +10 %", *s.db_per_10_percent)
                              : std::string("-"),
          fmt::format("at {} ({})", frequency_text(target.frequency_hz), target.label())};
      std::string extra = s.note;
      if (s.worst_frequency_after_hz) {
        if (!extra.empty()) extra += "; ";
        extra += fmt::format("worst moves to {} ({:.1f} {})",
                             frequency_text(*s.worst_frequency_after_hz),
                             s.worst_level_after.value_or(0.0), target.unit);
      }
      if (!extra.empty()) row.push_back(extra);
      rows.push_back(row);
    }
    out += format_columns(rows, {2});
    if (unchanged > 0)
      out += fmt::format("  {} more {} change it by less than 0.005 dB\n", unchanged,
                         unchanged == 1 ? "key" : "keys");
  }

  if (!result.invalid.empty()) {
    out += "\ninvalid after +10 % (the scenario's checks reject the changed value):\n";
    for (const InvalidKey& k : result.invalid) {
      out += "  " + result.keys[k.key].key + "  " + result.keys[k.key].value_text + ": " +
             k.message + "\n";
    }
  }
  if (!result.skipped.empty()) {
    out += "\nskipped:\n";
    rows.clear();
    for (const SkippedKey& k : result.skipped) rows.push_back({k.key, k.reason});
    out += format_columns(rows);
  }
  out += "\n";
  for (const std::string& note : result.notes) out += "note: " + note + "\n";
  out += fmt::format("{} keys, {} predictions on {} thread{}\n", result.keys.size(),
                     result.keys.size() + 1, result.threads, result.threads == 1 ? "" : "s");
  return out;
}

}  // namespace spurcast

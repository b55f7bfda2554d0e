#include "core/chain/sensitivity.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>

#include "core/chain/parallel.hpp"
#include "core/chain/scenario.hpp"
#include "core/chain/sweep.hpp"
#include "core/input/error.hpp"

namespace spurcast {

namespace {

/// Two tuned frequencies (or channel centres) are the same when they agree to this fraction: both
/// runs build the same grid from the same numbers, so they agree to rounding.
constexpr double same_frequency_fraction = 1e-9;

bool same_frequency(double a_hz, double b_hz) {
  return std::abs(a_hz - b_hz) <=
         same_frequency_fraction * std::max(std::abs(a_hz), std::abs(b_hz));
}

bool is_decibel(Dimension d) {
  return d == Dimension::decibel || d == Dimension::level_dbuv || d == Dimension::level_dbua ||
         d == Dimension::level_dbuvm;
}

void list_keys(const toml::table& table, const toml::table& root, const std::string& prefix,
               std::vector<SensitivityKey>& keys, std::vector<SkippedKey>& skipped) {
  for (const auto& [name, node] : table) {
    const std::string key =
        prefix.empty() ? std::string(name.str()) : prefix + "." + std::string(name.str());
    if (prefix.empty() && (key == "title" || key == "description")) continue;
    if (const toml::table* child = node.as_table()) {
      list_keys(*child, root, key, keys, skipped);
    } else if (const toml::array* array = node.as_array()) {
      if (!array->empty() && array->is_array_of_tables()) {
        for (std::size_t i = 0; i < array->size(); ++i) {
          list_keys(*array->get(i)->as_table(), root, key + "." + std::to_string(i + 1), keys,
                    skipped);
        }
      } else {
        skipped.push_back({key, "a list of values"});
      }
    } else if (node.is_boolean()) {
      skipped.push_back({key, "a true/false switch"});
    } else if (node.is_integer()) {
      skipped.push_back({key, "an integer: a count or a choice"});
    } else if (const auto* number = node.as_floating_point()) {
      if (number->get() == 0.0) {
        skipped.push_back({key, "zero: +10 % of 0 is 0"});
      } else {
        keys.push_back({key, fmt::format("{:g}", number->get()), number->get(), Dimension::number});
      }
    } else if (const auto* text = node.as_string()) {
      // The unit decides the dimension, as for `sweep --vary` (core/chain/sweep.hpp).
      const Dimension dimension = scenario_key_dimension(root, key, "");
      double value = 0.0;
      try {
        value = parse_quantity(text->get(), dimension);
      } catch (const Error&) {
        skipped.push_back({key, "text: a name, a file or a choice"});
        continue;
      }
      if (is_decibel(dimension)) {
        skipped.push_back({key, "a level in dB: +10 % of a logarithm is no proportional change"});
      } else if (value == 0.0) {
        skipped.push_back({key, "zero: +10 % of 0 is 0"});
      } else {
        keys.push_back({key, text->get(), value, dimension});
      }
    }
  }
}

/// The readings of `p` that the targets read: per detector target, the reading at its frequency
/// (margin rows, the readings that were compared with a limit: what margins.csv lists).
std::optional<double> detector_reading(const Prediction& p, Detector detector,
                                       double frequency_hz) {
  for (const MarginRow& row : p.margins.rows) {
    if (row.reading_detector == detector && same_frequency(row.frequency_hz, frequency_hz))
      return row.reading;
  }
  return std::nullopt;
}

const BandReception* find_reception(const Prediction& p, const std::string& band) {
  for (const BandReception& r : p.reception) {
    if (r.band.name == band) return &r;
  }
  return nullptr;
}

std::vector<SensitivityTarget> targets_of(const Prediction& p) {
  std::vector<SensitivityTarget> targets;
  for (const DetectorMargin& d : p.margins.worst_per_detector) {
    if (d.comparisons == 0) continue;
    SensitivityTarget t;
    t.detector = d.worst.reading_detector;
    t.frequency_hz = d.worst.frequency_hz;
    t.level = d.worst.reading;
    t.margin_db = d.worst.margin_db;
    t.limit_label = d.worst.limit_label;
    t.unit = d.worst.set_index < p.scenario.limits.sets.size()
                 ? unit_symbol(p.scenario.limits.sets[d.worst.set_index].unit)
                 : unit_symbol(Dimension::level_dbuv);
    targets.push_back(t);
  }
  for (const BandReception& r : p.reception) {
    if (!r.worst_channel) continue;
    const ChannelReception& c = r.channels[*r.worst_channel];
    SensitivityTarget t;
    t.band = r.band.name;
    t.frequency_hz = c.centre_hz;
    t.level = c.level_dbuvm;
    t.unit = "dBµV/m";
    targets.push_back(t);
  }
  return targets;
}

/// The figures of one changed prediction for every target.
std::vector<Sensitivity> read_changes(const Prediction& changed,
                                      const std::vector<SensitivityTarget>& targets,
                                      std::size_t key) {
  std::vector<Sensitivity> out;
  for (std::size_t t = 0; t < targets.size(); ++t) {
    const SensitivityTarget& target = targets[t];
    Sensitivity s;
    s.key = key;
    s.target = t;
    if (target.detector) {
      if (const auto level = detector_reading(changed, *target.detector, target.frequency_hz)) {
        s.db_per_10_percent = *level - target.level;
      } else {
        s.note = "no reading compared with a limit at this frequency after the change";
      }
      for (const DetectorMargin& d : changed.margins.worst_per_detector) {
        if (d.comparisons > 0 && d.worst.reading_detector == *target.detector &&
            !same_frequency(d.worst.frequency_hz, target.frequency_hz)) {
          s.worst_frequency_after_hz = d.worst.frequency_hz;
          s.worst_level_after = d.worst.reading;
          break;
        }
      }
    } else {
      const BandReception* r = find_reception(changed, target.band);
      if (r) {
        for (const ChannelReception& c : r->channels) {
          if (same_frequency(c.centre_hz, target.frequency_hz))
            s.db_per_10_percent = c.level_dbuvm - target.level;
        }
        if (r->worst_channel &&
            !same_frequency(r->channels[*r->worst_channel].centre_hz, target.frequency_hz)) {
          s.worst_frequency_after_hz = r->channels[*r->worst_channel].centre_hz;
          s.worst_level_after = r->channels[*r->worst_channel].level_dbuvm;
        }
      }
      if (!s.db_per_10_percent) s.note = "the channel hears no line after the change";
    }
    out.push_back(s);
  }
  return out;
}

}  // namespace

std::string SensitivityTarget::label() const {
  return detector ? to_string(*detector) : "band " + band;
}

void list_sensitivity_keys(const toml::table& table, std::vector<SensitivityKey>& keys,
                           std::vector<SkippedKey>& skipped) {
  list_keys(table, table, "", keys, skipped);
}

SensitivityResult run_sensitivity(const toml::table& table, const std::string& file,
                                  const std::string& directory, const ShippedData& data,
                                  const SensitivityOptions& options) {
  const Scenario base_scenario = scenario_from_table(table, file, directory, data);
  if (!base_scenario.switching || base_scenario.switching->dither) {
    throw Error(
        "sensitivity needs a described source without dither: a dithered or captured source goes "
        "through the "
        "time-domain receiver, too slow to re-run for every key");
  }
  const Prediction base = predict(base_scenario);

  SensitivityResult result;
  result.scenario_file = file;
  result.targets = targets_of(base);
  if (result.targets.empty()) {
    throw Error(
        "nothing to take sensitivities of: the scenario gives no limit line and no broadcast band");
  }
  list_sensitivity_keys(table, result.keys, result.skipped);

  const std::size_t total = result.keys.size();
  std::vector<std::vector<Sensitivity>> per_key(total);
  std::vector<std::optional<std::string>> errors(total);
  const unsigned threads =
      options.threads ? options.threads : sweep_thread_count(std::getenv("SPURCAST_THREADS"));
  result.threads =
      static_cast<unsigned>(std::max<std::size_t>(1, std::min<std::size_t>(threads, total)));

  parallel_for_each_index(total, result.threads, [&](std::size_t i) {
    const SensitivityKey& key = result.keys[i];
    toml::table changed = table;
    set_scenario_key(changed, key.key, key.value_si * (1.0 + sensitivity_step_fraction),
                     key.dimension);
    try {
      const Prediction p = predict(scenario_from_table(changed, file, directory, data));
      per_key[i] = read_changes(p, result.targets, i);
    } catch (const Error& e) {
      errors[i] = e.what();  // the changed scenario is invalid: reported per key, not fatal
    }
  });

  for (std::size_t i = 0; i < total; ++i) {
    if (errors[i]) {
      result.invalid.push_back({i, *errors[i]});
      continue;
    }
    result.sensitivities.insert(result.sensitivities.end(), per_key[i].begin(), per_key[i].end());
  }
  std::stable_sort(result.sensitivities.begin(), result.sensitivities.end(),
                   [](const Sensitivity& a, const Sensitivity& b) {
                     if (a.target != b.target) return a.target < b.target;
                     if (a.db_per_10_percent.has_value() != b.db_per_10_percent.has_value())
                       return a.db_per_10_percent.has_value();
                     if (!a.db_per_10_percent) return false;
                     return std::abs(*a.db_per_10_percent) > std::abs(*b.db_per_10_percent);
                   });
  result.notes.push_back(
      "each figure is the reading after +10 % of one value minus the reading before, at the same "
      "tuned frequency "
      "(the same channel for a band): two full predictions per key, as two `predict` runs would "
      "give");
  result.notes.push_back(
      "dithered and captured sources are not supported (the time-domain receiver is too slow to "
      "re-run per key)");
  return result;
}

}  // namespace spurcast

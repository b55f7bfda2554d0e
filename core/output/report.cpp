#include "core/output/report.hpp"

#include <algorithm>
#include <cmath>
#include <complex>
#include <cstdio>
#include <limits>
#include <map>

#include <nlohmann/json.hpp>

#include "core/coupling/converter.hpp"
#include "core/input/error.hpp"
#include "core/source/source.hpp"
#include "core/input/units.hpp"

namespace spurcast {

namespace {

// Colours of the detectors and lines (our own palette, shared by the plots and the page).
constexpr const char* peak_colour = "#3f8fa6";
constexpr const char* quasi_peak_colour = "#c8553d";
constexpr const char* average_colour = "#6a5aa8";

std::string fixed(double value, int decimals) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.*f", decimals, value);
  std::string text = buffer;
  if (text.find_first_not_of("-0.") == std::string::npos && text.front() == '-') text.erase(0, 1);  // no "-0.00"
  return text;
}
/// Levels in the CSVs: fixed 0.01 dB, so the files keep what the model computed.
std::string level_text(double level_db) { return fixed(level_db, 2); }
/// Levels and margins on the page: 0.1 dB, no finer than any model of this kind is right (issue 19).
/// A value below zero keeps its sign even when it rounds to 0.0: a margin of −0.04 dB is a fail and
/// reads "-0.0", never "0.0" beside a FAIL.
std::string page_level_text(double level_db) {
  std::string text = fixed(level_db, 1);
  if (level_db < 0.0 && text.front() != '-') text.insert(0, "-");
  return text;
}
std::string frequency_text(double frequency_hz) { return fixed(frequency_hz, 1); }
/// The value exactly as the CSV prints it, for JSON (so the two agree to the last digit).
double rounded(double value, int decimals) { return std::stod(fixed(value, decimals)); }

double magnitude_dbuv(std::complex<double> phasor) { return volts_to_dbuv(std::abs(phasor)); }

std::string html(std::string_view text) { return xml_escape(text); }

std::string detector_colour(Detector detector) {
  switch (detector) {
    case Detector::peak: return peak_colour;
    case Detector::quasi_peak: return quasi_peak_colour;
    case Detector::average: return average_colour;
  }
  return peak_colour;
}
/// The "before" readings (design-filter --report): lighter tints of the detector colours, our own.
std::string before_colour(Detector detector) {
  switch (detector) {
    case Detector::peak: return "#9fb7c9";
    case Detector::quasi_peak: return "#c9a98f";
    case Detector::average: return "#a9c4a0";
  }
  return "#9fb7c9";
}

/// The scan of `band` in `before`, or null.
const BandScan* before_scan(const Prediction& before, CisprBand band) {
  for (const BandScan& scan : before.scans) {
    if (scan.band == band) return &scan;
  }
  return nullptr;
}

std::string detector_dash(Detector detector) {
  switch (detector) {
    case Detector::peak: return "2 3";
    case Detector::quasi_peak: return "";
    case Detector::average: return "8 4";
  }
  return "";
}
std::string detector_short(Detector detector) {
  switch (detector) {
    case Detector::peak: return "PK";
    case Detector::quasi_peak: return "QP";
    case Detector::average: return "AV";
  }
  return "PK";
}

/// A dB value with a true minus sign for the page and the plots.
std::string signed_db(double value_db, int decimals = 1) {
  std::string text = fixed(value_db, decimals);
  // A margin below zero keeps its sign when it rounds to zero: −0.04 dB is a fail.
  if (value_db < 0.0 && !text.empty() && text.front() != '-') text.insert(0, "-");
  if (!text.empty() && text.front() == '-') text = "\xE2\x88\x92" + text.substr(1);
  return text + " dB";
}

/// Frequencies in text: 4 significant digits (issue 19; the CSVs and JSON keep full precision).
std::string frequency_quantity(double frequency_hz) { return format_quantity(frequency_hz, Dimension::frequency, 4); }

/// The 6 dB bandwidth of the scan holding `frequency_hz` (9 kHz when no scan holds it).

std::string lisn_circuit_name(LisnCircuit circuit) {
  return circuit == LisnCircuit::ideal ? "ideal" : "practical";
}
std::string filter_lines_name(FilterLines lines) {
  switch (lines) {
    case FilterLines::positive: return "positive";
    case FilterLines::negative: return "negative";
    case FilterLines::both: return "both";
  }
  return "positive";
}
std::string dither_profile_name(DitherProfile profile) {
  return profile == DitherProfile::triangle ? "triangle" : "sine";
}
std::string quantity_name(Quantity quantity) { return quantity == Quantity::voltage ? "voltage" : "current"; }

std::string join(const std::vector<std::string>& items, const std::string& separator) {
  std::string out;
  for (std::size_t i = 0; i < items.size(); ++i) out += (i ? separator : "") + items[i];
  return out;
}

const char* verdict_word(Verdict verdict) {
  switch (verdict) {
    case Verdict::pass: return "PASS";
    case Verdict::marginal: return "MARGINAL";
    case Verdict::fail: return "FAIL";
    case Verdict::incomplete: return "INCOMPLETE";
    case Verdict::no_limits: return "NO LIMITS";
  }
  return "INCOMPLETE";
}

std::optional<double> uncertainty_for(const Prediction& p) {
  for (const MarginRow& row : p.margins.rows) {
    if (row.uncertainty_db) return row.uncertainty_db;
  }
  if (!p.scans.empty()) {
    const BandParameters band = band_parameters(p.scans.front().band);
    return cispr_uncertainty_db(LimitQuantity::conducted_voltage, (band.start_hz + band.stop_hz) / 2.0);
  }
  return std::nullopt;
}

}  // namespace


std::vector<std::string> not_computed_lines(const Prediction& p) {
  std::vector<std::string> lines;
  for (const NotComputed& part : p.margins.not_computed) lines.push_back(describe(part));
  for (const UncomputedRange& range : p.unread_bands) {
    lines.push_back(frequency_quantity(range.from_hz) + "-" +
                    frequency_quantity(range.to_hz) + " of " + range.what + ": " + range.reason);
  }
  std::vector<std::string> bands;
  for (const BandReception& b : p.reception) {
    if (b.verdict == ReceptionVerdict::not_computed) bands.push_back(b.band.name);
  }
  if (!bands.empty()) {
    lines.push_back("broadcast band" + std::string(bands.size() > 1 ? "s " : " ") + join(bands, ", ") +
                    ": the source's lines stop at " + frequency_quantity(p.computed_up_to_hz) +
                    " (half the capture's sample rate)");
  }
  return lines;
}

std::string single_path_warning(const Prediction& p) {
  if (p.common_mode_only) {
    return "common-mode noise only: the voltage capture drives the common-mode path, differential-mode noise "
           "(the input current's) is not included";
  }
  if (p.differential_mode_only) {
    return "differential-mode noise only: the current capture drives the differential-mode path, common-mode "
           "noise (the switch node's) is not included";
  }
  return "";
}

std::string verdict_sentence(const Prediction& p) {
  const MarginReport& m = p.margins;
  std::string out;
  if (const std::string warning = single_path_warning(p); !warning.empty()) out = warning + "; ";
  if (!m.not_computed.empty()) {
    out += "not computed: " + describe(m.not_computed.front());
    if (m.not_computed.size() > 1) out += " (and " + std::to_string(m.not_computed.size() - 1) + " more)";
    out += "; ";
  }
  if (p.verdict == Verdict::no_limits) return out + "no limit lines were given: nothing was compared";
  if (!m.worst) return out + "no reading fell within the limit lines: nothing compared";
  const MarginRow& w = *m.worst;
  const std::string where = "worst margin " + signed_db(w.margin_db) + " (" + to_string(w.reading_detector) +
                            " reading at " + frequency_quantity(w.frequency_hz) + " against " + w.limit_label + ")";
  switch (p.verdict) {
    case Verdict::pass: return out + "every limit is met with the " + signed_db(m.guard_db, 1) + " guard band: " + where;
    case Verdict::marginal:
      return out + "every limit is met, but a margin is under the " + signed_db(m.guard_db, 1) + " guard band: " + where;
    case Verdict::fail: return out + "a limit is exceeded: " + where;
    case Verdict::incomplete: return out + "where computed, " + where;
    case Verdict::no_limits: break;
  }
  return out + where;
}

// ---------------------------------------------------------------------------------------------
// CSV files.

std::string lisn_spectrum_csv(const Prediction& p) {
  std::string csv = "harmonic,frequency_hz,level_dbuv,line1_dbuv,line2_dbuv,dm_dbuv,cm_dbuv\n";
  if (!p.conducted) return csv;
  const ConductedResult& c = *p.conducted;
  for (std::size_t k = 0; k < c.frequency_hz.size(); ++k) {
    const double line1 = magnitude_dbuv(c.line1_v[k]);
    const double line2 = k < c.line2_v.size() ? magnitude_dbuv(c.line2_v[k]) : level_floor_db;
    const double dm = k < c.dm_v.size() ? magnitude_dbuv(c.dm_v[k]) : level_floor_db;
    const double cm = k < c.cm_v.size() ? magnitude_dbuv(c.cm_v[k]) : level_floor_db;
    csv += std::to_string(k + 1) + "," + frequency_text(c.frequency_hz[k]) + "," + level_text(std::max(line1, line2)) +
           "," + level_text(line1) + "," + level_text(line2) + "," + level_text(dm) + "," + level_text(cm) + "\n";
  }
  return csv;
}

namespace {

std::string line_spectrum_csv(const LineSpectrum& lines, const std::optional<SwitchingSpec>& spec, double amplitude) {
  const std::string suffix = level_suffix(lines.quantity);
  std::string csv = "harmonic,frequency_hz,level_" + suffix + (spec ? ",envelope_" + suffix : std::string()) + "\n";
  for (std::size_t k = 0; k < lines.harmonics.size(); ++k) {
    const double f = lines.frequency_hz(k);
    csv += std::to_string(k + 1) + "," + frequency_text(f) + "," + level_text(volts_to_dbuv(std::abs(lines.harmonics[k])));
    if (spec) csv += "," + level_text(volts_to_dbuv(trapezoid_envelope_rms(*spec, amplitude, f)));
    csv += "\n";
  }
  return csv;
}

}  // namespace

std::string source_spectrum_csv(const Prediction& p) {
  const std::optional<SwitchingSpec>& spec = p.scenario.switching;
  return line_spectrum_csv(p.switch_node_v, spec, spec ? spec->amplitude_v : 0.0);
}

std::string source_current_spectrum_csv(const Prediction& p) {
  const std::optional<SwitchingSpec>& spec = p.scenario.switching;
  // The trapezoid's envelope bounds only a flat-topped pulse: not a boost's triangle or a ramped top.
  const bool trapezoid = spec && spec->input_current_shape == InputCurrentShape::pulsed && spec->current_ripple_a == 0.0;
  return line_spectrum_csv(p.input_current_a, trapezoid ? spec : std::nullopt, spec ? spec->current_a : 0.0);
}

namespace {

/// The detectors whose reading is the noise floor, joined by '+' ("" for none).
std::string at_floor_text(const Reading& r, const std::optional<double>& noise_floor_db) {
  std::string text;
  for (const Detector d : {Detector::peak, Detector::quasi_peak, Detector::average}) {
    if (at_noise_floor(r.level_db(d), noise_floor_db)) text += (text.empty() ? "" : "+") + to_string(d);
  }
  return text;
}

}  // namespace

std::string scan_csv(const Prediction& p) {
  std::vector<std::pair<Reading, std::optional<double>>> rows;  // reading, its band's noise floor
  for (const BandScan& scan : p.scans) {
    for (const Reading& r : scan.worst.readings) rows.emplace_back(r, scan.worst.noise_floor_db);
  }
  // Stable: at a shared frequency the earlier (lower) band stays first, then duplicates are dropped.
  std::stable_sort(rows.begin(), rows.end(),
                   [](const auto& a, const auto& b) { return a.first.frequency_hz < b.first.frequency_hz; });
  std::string csv = "frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv,at_floor\n";
  std::string previous;
  for (const auto& [r, floor_db] : rows) {
    const std::string f = frequency_text(r.frequency_hz);
    if (f == previous) continue;
    previous = f;
    csv += f + "," + level_text(r.peak_db) + "," + level_text(r.quasi_peak_db) + "," + level_text(r.average_db) + "," +
           at_floor_text(r, floor_db) + "\n";
  }
  return csv;
}


// ---------------------------------------------------------------------------------------------
// summary.json

namespace {

/// The contributors as summary.json lists them (core/chain/contributors.hpp).
nlohmann::ordered_json contributors_json(const std::vector<Contributor>& list) {
  nlohmann::ordered_json contributors = nlohmann::ordered_json::array();
  for (const Contributor& c : list) {
    nlohmann::ordered_json item;
    item["frequency_hz"] = rounded(c.frequency_hz, 1);
    item["harmonic"] = c.harmonic;
    item["harmonic_hz"] = rounded(c.harmonic_hz, 1);
    item["dm_share"] = rounded(c.dm_share, 4);
    item["cm_share"] = rounded(c.cm_share, 4);
    item["dm_dbuv"] = rounded(c.dm_dbuv, 2);
    item["cm_dbuv"] = rounded(c.cm_dbuv, 2);
    item["dm_to_cm_fraction"] = rounded(c.dm_to_cm_fraction, 4);
    item["cm_to_dm_fraction"] = rounded(c.cm_to_dm_fraction, 4);
    item["conversion"] = c.conversion.empty() ? nlohmann::ordered_json() : nlohmann::ordered_json(c.conversion);
    item["source"] = c.source;
    item["path"] = c.path;
    contributors.push_back(item);
  }
  return contributors;
}

nlohmann::ordered_json margin_row_json(const MarginRow& row, double guard_db) {
  nlohmann::ordered_json j;
  j["frequency_hz"] = rounded(row.frequency_hz, 1);
  j["detector"] = to_string(row.reading_detector);
  j["reading_dbuv"] = rounded(row.reading, 2);
  j["limit_dbuv"] = rounded(row.limit, 2);
  j["margin_db"] = rounded(row.margin_db, 2);
  j["limit"] = row.limit_label;
  j["limit_detector"] = to_string(row.limit_detector);
  j["verdict"] = to_string(verdict_for(row.margin_db, guard_db));
  if (row.uncertainty_db) j["uncertainty_db"] = rounded(*row.uncertainty_db, 2);
  return j;
}

}  // namespace

std::string summary_json(const Prediction& p, const std::vector<std::string>& files) {
  nlohmann::ordered_json j;
  j["spurcast_version"] = SPURCAST_VERSION;
  j["title"] = p.scenario.title;
  j["scenario"] = p.scenario.file;
  j["source"] = to_string(p.source_kind);
  j["receiver_path"] = to_string(p.receiver_path);
  if (p.mains_gating) {
    const MainsGating& g = *p.mains_gating;
    nlohmann::ordered_json bands = nlohmann::ordered_json::object();
    for (const auto& [band, reading] : g.band_readings) {
      bands[to_string(band)] = reading == ModulatedReading::several_harmonics ? "crest" : to_string(reading);
    }
    j["mains_gating"] = {{"mains_frequency_hz", rounded(g.mains_frequency_hz, 3)},
                         {"crest_input_v", rounded(g.crest_input_v, 3)},
                         {"switching_threshold_v", rounded(g.switching_threshold_v, 3)},
                         {"switching_fraction", rounded(g.switching_fraction, 4)},
                         {"instants", g.phases},
                         {"bands", bands}};
    if (g.conduction == Conduction::critical) {
      j["mains_gating"]["conduction"] = conduction_name(g.conduction);
      j["mains_gating"]["lowest_switching_hz"] = rounded(g.lowest_switching_hz, 1);
      j["mains_gating"]["highest_switching_hz"] = rounded(g.highest_switching_hz, 1);
      j["mains_gating"]["clamped_instants"] = g.clamped_phases;
    }
  }
  j["verdict"] = to_string(p.verdict);
  // What was not computed comes right after the verdict it qualifies.
  nlohmann::ordered_json not_computed = nlohmann::ordered_json::array();
  for (const NotComputed& part : p.margins.not_computed) {
    not_computed.push_back({{"limit", part.limit_label},
                            {"from_hz", rounded(part.from_hz, 1)},
                            {"to_hz", std::isfinite(part.to_hz) ? nlohmann::ordered_json(rounded(part.to_hz, 1))
                                                                : nlohmann::ordered_json()},
                            {"reason", part.reason}});
  }
  for (const UncomputedRange& range : p.unread_bands) {
    not_computed.push_back({{"range", range.what},
                            {"from_hz", rounded(range.from_hz, 1)},
                            {"to_hz", rounded(range.to_hz, 1)},
                            {"reason", range.reason}});
  }
  for (const BandReception& b : p.reception) {
    if (b.verdict != ReceptionVerdict::not_computed) continue;
    not_computed.push_back({{"broadcast_band", b.band.name},
                            {"from_hz", rounded(std::max(b.band.low_hz, p.computed_up_to_hz), 1)},
                            {"to_hz", rounded(b.band.high_hz, 1)},
                            {"reason", "the source's lines stop at " +
                                           format_quantity(p.computed_up_to_hz, Dimension::frequency, 5)}});
  }
  j["not_computed"] = not_computed;
  // A capture that drives one path: the other path's noise is missing from every margin.
  const std::string single_path = single_path_warning(p);
  j["paths"] = p.common_mode_only ? "common mode only" : p.differential_mode_only ? "differential mode only" : "both";
  if (!single_path.empty()) j["paths_warning"] = single_path;
  j["guard_db"] = rounded(p.margins.guard_db, 2);
  nlohmann::ordered_json worst_per = nlohmann::ordered_json::object();
  for (const DetectorMargin& d : p.margins.worst_per_detector) {
    worst_per[to_string(d.detector)] = rounded(d.worst.margin_db, 2);
  }
  j["worst_margin_db"] = worst_per;
  j["worst"] = p.margins.worst ? margin_row_json(*p.margins.worst, p.margins.guard_db) : nlohmann::ordered_json();
  nlohmann::ordered_json worst_list = nlohmann::ordered_json::array();
  for (const WorstFrequency& w : worst_frequencies(p, 5)) {
    const nlohmann::ordered_json row = margin_row_json(w.row, p.margins.guard_db);
    worst_list.push_back(row);
  }
  j["worst_frequencies"] = worst_list;
  j["contributors"] = contributors_json(p.contributors);
  j["contributors_requested"] = contributors_json(p.contributors_requested);
  const std::optional<double> u = uncertainty_for(p);
  j["uncertainty_db"] = u ? nlohmann::ordered_json(rounded(*u, 2)) : nlohmann::ordered_json();
  nlohmann::ordered_json limits = nlohmann::ordered_json::array();
  for (const LimitSet& set : p.scenario.limits.sets) {
    limits.push_back({{"name", set.name},
                      {"file", set.file},
                      {"measures", to_string(set.measures)},
                      {"source", set.source},
                      {"confidence", set.confidence_text}});
  }
  j["limits"] = limits;
  nlohmann::ordered_json bands = nlohmann::ordered_json::array();
  for (const BandReception& b : p.reception) {
    nlohmann::ordered_json band;
    band["name"] = b.band.name;
    band["region"] = b.band.region;
    band["low_hz"] = rounded(b.band.low_hz, 1);
    band["high_hz"] = rounded(b.band.high_hz, 1);
    band["verdict"] = reception_verdict_name(b.verdict);
    band["antenna"] = antenna_name(b.antenna);
    if (b.worst_channel) {
      const ChannelReception& c = b.channels[*b.worst_channel];
      band["worst_channel_hz"] = rounded(c.centre_hz, 1);
      band["worst_level_dbuvm"] = rounded(c.level_dbuvm, 2);
      nlohmann::ordered_json shares = nlohmann::ordered_json::object();
      for (std::size_t r = 0; r < radiator_count; ++r) {
        shares[radiator_name(static_cast<Radiator>(r))] = rounded(c.radiator_share[r], 4);
      }
      band["radiator_shares"] = shares;
    } else {
      band["worst_channel_hz"] = nullptr;
      band["worst_level_dbuvm"] = nullptr;
    }
    bands.push_back(band);
  }
  j["bands"] = bands;
  j["broadcast_assumptions"] = p.reception_assumptions;
  nlohmann::ordered_json scans = nlohmann::ordered_json::array();
  for (const BandScan& scan : p.scans) {
    const BandParameters band = band_parameters(scan.band);
    scans.push_back({{"band", to_string(scan.band)},
                     {"start_hz", rounded(band.start_hz, 1)},
                     {"stop_hz", rounded(band.stop_hz, 1)},
                     {"bandwidth_6db_hz", rounded(scan.worst.bandwidth_6db_hz, 1)},
                     {"step_hz", rounded(scan.worst.step_hz, 1)},
                     {"points", scan.worst.readings.size()},
                     {"lines", scan.line2 ? 2 : 1}});
  }
  j["scans"] = scans;
  j["lisn_setup"] = p.setup_description;
  j["notes"] = p.notes;
  j["files"] = files;
  return j.dump(2) + "\n";
}

// ---------------------------------------------------------------------------------------------
// Scenario table.

std::vector<ScenarioInput> scenario_inputs(const Scenario& s) {
  std::vector<ScenarioInput> rows;
  auto add = [&](const std::string& section, const std::string& name, const std::string& value) {
    rows.push_back({section, name, value});
  };
  auto q = [](double value, Dimension dimension) { return format_quantity(value, dimension); };
  add("scenario", "title", s.title.empty() ? "(none)" : s.title);
  if (!s.description.empty()) add("scenario", "description", s.description);
  add("scenario", "file", s.file);
  if (s.switching) {
    const SwitchingSpec& w = *s.switching;
    add("switching", "frequency", q(w.frequency_hz, Dimension::frequency));
    add("switching", "duty", q(w.duty, Dimension::fraction));
    add("switching", "amplitude (switch-node swing)", q(w.amplitude_v, Dimension::voltage));
    // For a boost the input current is continuous: `current` is its DC value (core/source/source.hpp).
    add("switching",
        w.input_current_shape == InputCurrentShape::triangular ? "current (DC input current, triangular ripple on it)"
                                                              : "current (pulsed input current)",
        q(w.current_a, Dimension::current));
    add("switching", "rise (0-100 %)", q(w.rise_s, Dimension::time));
    add("switching", "fall (0-100 %)", q(w.fall_s, Dimension::time));
    if (w.ringing) {
      add("switching", "ringing frequency", q(w.ringing->frequency_hz, Dimension::frequency));
      add("switching", "ringing decay (1/e)", q(w.ringing->decay_s, Dimension::time));
      add("switching", "ringing amplitude (of the edge step)", q(w.ringing->relative_amplitude, Dimension::fraction));
    } else {
      add("switching", "ringing", "none");
    }
    if (w.current_ringing) {
      add("switching", "current ringing frequency", q(w.current_ringing->frequency_hz, Dimension::frequency));
      add("switching", "current ringing decay (1/e)", q(w.current_ringing->decay_s, Dimension::time));
      add("switching", "current ringing amplitude (of the current)",
          q(w.current_ringing->relative_amplitude, Dimension::fraction));
    }
    if (w.dither) {
      add("switching", "dither profile", dither_profile_name(w.dither->profile));
      add("switching", "dither deviation", q(w.dither->deviation_fraction, Dimension::fraction));
      add("switching", "dither rate", q(w.dither->rate_hz, Dimension::frequency));
    } else {
      add("switching", "dither", "none");
    }
  }
  if (s.capture) {
    const CaptureSpec& c = *s.capture;
    add("capture", "file", c.file);
    add("capture", "time column", c.time_column.describe());
    add("capture", "value column", c.column.describe());
    add("capture", "scale", q(c.scale, Dimension::number));
    add("capture", "quantity", quantity_name(c.quantity));
    add("capture", "switching frequency",
        c.switching_frequency_hz ? q(*c.switching_frequency_hz, Dimension::frequency) : "estimated from the record");
    add("capture", "resample", c.resample ? "yes" : "no");
    if (c.current_column) {
      add("capture", "current column", c.current_column->describe());
      add("capture", "current scale", q(c.current_scale, Dimension::number));
    }
  }
  const std::string coupling_note = s.has_coupling ? "" : " (default)";
  if (s.converter.topology == Topology::netlist) {
    add("coupling", "input capacitor and parasitic capacitance", "in the converter subcircuit");
  } else {
  add("coupling", "input capacitance", q(s.coupling.input_capacitance_f, Dimension::capacitance) + coupling_note);
  add("coupling", "input capacitor ESR", q(s.coupling.input_esr_ohm, Dimension::resistance) + coupling_note);
  add("coupling", "input capacitor ESL", q(s.coupling.input_esl_h, Dimension::inductance) + coupling_note);
  add("coupling", "parasitic capacitance (switch node to ground)",
      q(s.coupling.parasitic_capacitance_f, Dimension::capacitance) + coupling_note);
  }
  // Listed only when given: a scenario without [converter] keeps the listing it always had.
  const ConverterSpec& cv = s.converter;
  if (cv.topology != Topology::buck || cv.inductor_ripple_a) {
    add("converter", "topology", topology_name(cv.topology));
    const bool critical = cv.topology == Topology::boost_pfc && cv.mains.conduction == Conduction::critical;
    add("converter", "inductor ripple (peak to peak)",
        critical                ? std::string("twice the input current (critical conduction: from zero in every cycle)")
        : cv.inductor_ripple_a ? q(*cv.inductor_ripple_a, Dimension::current)
                               : "none (flat-topped pulse)");
    if (cv.topology == Topology::netlist) {
      add("converter", "subcircuit", cv.netlist->subckt + " in " + cv.netlist->file);
    }
    if (cv.topology == Topology::boost_pfc) {
      add("converter", "mains frequency", q(cv.mains.mains_frequency_hz, Dimension::frequency));
      add("converter", "switching threshold (rectified input)", q(cv.mains.switching_threshold_v, Dimension::voltage));
      const bool dithered = s.switching && s.switching->dither;
      add("converter", "conduction", conduction_name(cv.mains.conduction));
      add("converter", "mains-cycle gating",
          dithered   ? "not modelled with dither (crest of the mains cycle)"
          : critical ? "constant on time: duty, current and switching frequency follow the rectified mains over each "
                       "half-cycle (the frequency clamped at " +
                           q(max_critical_frequency_ratio, Dimension::number) + " x the crest's, judgement)"
                     : "duty, current and ripple follow the rectified mains over each half-cycle; fixed switching "
                       "frequency (continuous conduction)");
    }
    if (cv.topology == Topology::flyback) {
      add("converter", "interwinding capacitance", q(cv.interwinding_capacitance_f, Dimension::capacitance));
      add("converter", "secondary capacitance to earth", q(cv.secondary_capacitance_f, Dimension::capacitance));
      add("converter", "Y capacitor across the barrier",
          cv.y_capacitance_f > 0.0 ? q(cv.y_capacitance_f, Dimension::capacitance) : "none");
      add("converter", "barrier insulation resistance", q(barrier_resistance_ohm, Dimension::resistance) + " (common practice)");
    }
  }
  if (s.filters.empty()) add("filter", "stages", "none");
  for (std::size_t i = 0; i < s.filters.size(); ++i) {
    const FilterStage& f = s.filters[i];
    const std::string section = "filter " + std::to_string(i + 1) + " (" + filter_kind_name(f.kind) + ")";
    // A parasitic the scenario left out is a stated default, never a silent ideal part.
    auto part = [&](double value, Dimension dimension, std::string_view key) {
      const std::string text = std::isfinite(value) ? (value > 0.0 ? q(value, dimension) : "none") : "none";
      return text + (is_defaulted(f.defaulted, key) ? " (default)" : "");
    };
    auto winding_rows = [&](const std::string& per) {
      add(section, "winding capacitance" + per, part(f.winding_capacitance_f, Dimension::capacitance, "winding_capacitance"));
      add(section, "core-loss resistance" + per,
          part(f.core_loss_resistance_ohm, Dimension::resistance, "core_loss_resistance"));
    };
    switch (f.kind) {
      case FilterKind::lc:
      case FilterKind::pi:
        add(section, "inductance", q(f.inductance_h, Dimension::inductance));
        add(section, "inductor resistance", q(f.inductor_resistance_ohm, Dimension::resistance));
        if (f.kind == FilterKind::pi) {
          add(section, "LISN-side capacitance", q(f.lisn_side_capacitance_f, Dimension::capacitance));
        }
        add(section, f.kind == FilterKind::pi ? "converter-side capacitance" : "capacitance",
            q(f.converter_side_capacitance_f, Dimension::capacitance));
        add(section, "capacitor ESR", part(f.capacitor_esr_ohm, Dimension::resistance, "capacitor_esr"));
        add(section, "capacitor ESL", part(f.capacitor_esl_h, Dimension::inductance, "capacitor_esl"));
        winding_rows("");
        add(section, "lines", filter_lines_name(f.lines));
        break;
      case FilterKind::common_mode_choke:
        add(section, "inductance (per winding)", q(f.inductance_h, Dimension::inductance));
        add(section, "coupling factor", q(f.coupling, Dimension::number));
        add(section, "winding resistance", q(f.inductor_resistance_ohm, Dimension::resistance));
        winding_rows(" (per winding)");
        add(section, "interwinding capacitance",
            part(f.interwinding_capacitance_f, Dimension::capacitance, "interwinding_capacitance"));
        break;
      case FilterKind::y_capacitors:
        add(section, "capacitance (each)", q(f.converter_side_capacitance_f, Dimension::capacitance));
        add(section, "capacitor ESR", part(f.capacitor_esr_ohm, Dimension::resistance, "capacitor_esr"));
        add(section, "capacitor ESL", part(f.capacitor_esl_h, Dimension::inductance, "capacitor_esl"));
        add(section, "lines", filter_lines_name(f.lines));
        break;
      case FilterKind::touchstone:
        add(section, "file (two-port, measured)", f.file);
        add(section, "frequency range", q(f.touchstone->lowest_hz(), Dimension::frequency) + " to " +
                                            q(f.touchstone->highest_hz(), Dimension::frequency) +
                                            " (interpolated linearly on S; no extrapolation)");
        break;
      case FilterKind::spice:
        add(section, "file", f.file + ", subcircuit " + f.subckt + " (SPICE parts are ideal: parasitics are elements)");
        [[fallthrough]];
      case FilterKind::netlist:
        for (const NetlistElement& e : f.elements) {
          auto element_part = [&](const NetlistElement& el, double value, Dimension dimension, std::string_view key) {
            const std::string text = std::isfinite(value) ? (value > 0.0 ? q(value, dimension) : "none") : "none";
            return text + (is_defaulted(el.defaulted, key) ? " (default)" : "");
          };
          auto winding_text = [&](const NetlistElement& el) {
            return ", winding capacitance " +
                   element_part(el, el.winding_capacitance_f, Dimension::capacitance, "winding_capacitance") +
                   ", core loss " +
                   element_part(el, el.core_loss_resistance_ohm, Dimension::resistance, "core_loss_resistance");
          };
          std::string value;
          switch (e.type) {
            case 'R': value = q(e.value, Dimension::resistance); break;
            case 'L':
              value = q(e.value, Dimension::inductance);
              if (e.resistance_ohm > 0) value += ", " + q(e.resistance_ohm, Dimension::resistance);
              value += winding_text(e);
              break;
            case 'C':
              value = q(e.value, Dimension::capacitance) + ", ESR " + element_part(e, e.esr_ohm, Dimension::resistance, "esr") +
                      ", ESL " + element_part(e, e.esl_h, Dimension::inductance, "esl");
              break;
            case 'T':
              value = "measured one-port " + e.file + ", " + q(e.touchstone->lowest_hz(), Dimension::frequency) + " to " +
                      q(e.touchstone->highest_hz(), Dimension::frequency);
              break;
            case 'K':
              value = q(e.value, Dimension::inductance) + " / " + q(e.value_2, Dimension::inductance) + ", k = " +
                      q(e.coupling, Dimension::number) + " (" + e.from_2 + " \xE2\x86\x92 " + e.to_2 + ")" +
                      winding_text(e) + ", interwinding " +
                      element_part(e, e.interwinding_capacitance_f, Dimension::capacitance, "interwinding_capacitance");
              break;
            default: value = q(e.value, Dimension::number);
          }
          add(section, (e.type == 'T' ? std::string("touchstone") : std::string(1, e.type)) + " " + e.from + " \xE2\x86\x92 " + e.to, value);
        }
        break;
    }
  }
  add("lisn", "model", lisn_model_name(s.lisn.model));
  add("lisn", "lines", std::to_string(s.lisn.lines));
  if (s.lisn.measured) {
    add("lisn", "measured impedance", s.lisn.file);
  } else {
    add("lisn", "circuit", lisn_circuit_name(s.lisn.circuit));
  }
  std::vector<std::string> bands, detectors;
  for (CisprBand b : s.receiver.bands) bands.push_back(to_string(b));
  for (Detector d : s.receiver.detectors) detectors.push_back(to_string(d));
  add("receiver", "CISPR bands", join(bands, ", "));
  add("receiver", "detectors", join(detectors, ", "));
  add("receiver", "step", s.receiver.step_hz ? q(*s.receiver.step_hz, Dimension::frequency) : "default (B6/4)");
  if (s.limits.sets.empty()) add("limits", "sets", "none");
  for (const LimitSet& set : s.limits.sets) add("limits", "set", set.name + (set.file.empty() ? " (inline)" : ""));
  add("limits", "guard band", q(s.limits.guard_db, Dimension::decibel));
  const BroadcastSpec& b = s.broadcast;
  add("broadcast", "ITU region", std::to_string(b.region));
  if (b.plan) add("broadcast", "band plan", s.data.shown_path(*b.plan));
  add("broadcast", "distance", q(b.distance_m, Dimension::length));
  add("broadcast", "cable length", q(b.cable_length_m, Dimension::length));
  add("broadcast", "environment", environment_name(b.environment));
  add("broadcast", "antenna", antenna_choice_name(b.antenna));
  add("supply", "kind", supply_kind_name(s.supply.kind));
  if (s.supply.kind == SupplyKind::battery) {
    add("supply", "lead length", q(s.supply.lead_length_m, Dimension::length));
    add("supply", "internal resistance", q(s.supply.internal_resistance_ohm, Dimension::resistance));
    add("supply", "product size", q(s.supply.product_size_m, Dimension::length));
  }
  add("supply", "conductor spacing", q(s.supply.lead_spacing_m, Dimension::length));
  if (s.board.hot_loop_area_m2) {
    char area[64];
    std::snprintf(area, sizeof area, "%.4g cm\xC2\xB2", *s.board.hot_loop_area_m2 * 1e4);
    add("board", "hot loop area", area);
  } else {
    add("board", "hot loop area", "not given (no hot-loop field)");
  }
  add("broadcast", "ground reflection", b.ground_reflection ? "yes (+6 dB)" : "no");
  for (const Band& band : b.extra_bands) {
    add("broadcast", "user band " + band.name,
        format_quantity(band.low_hz, Dimension::frequency, band_edge_digits) + " \xE2\x80\x93 " +
            format_quantity(band.high_hz, Dimension::frequency, band_edge_digits));
  }
  return rows;
}

// ---------------------------------------------------------------------------------------------
// Plots.

namespace {

/// Two detectors' traces closer than this everywhere are drawn as one, with a note in the legend [dB]
/// (judgement: under the 0.1 dB the text shows and under a line's width at the plot's scale).
constexpr double coincide_tolerance_db = 0.05;
/// A reading within this of the receiver's noise floor read only the floor [dB] (judgement, as above).
constexpr double at_floor_tolerance_db = 0.05;

/// The line colours of the limit sets, one per set in scenario order (our own dark hues; the
/// detector of a line is its dash pattern, so a set is its colour).
constexpr const char* limit_set_colours[] = {"#22303a", "#8a5a12", "#2e6b4f", "#6b2e5f"};

/// The detector traces of `scan`: detectors whose readings coincide everywhere are drawn once, labelled
/// with every name ("peak = quasi-peak = average (coincide)"); readings on the receiver's noise floor
/// are left out (the floor line shows them), keeping the point next to a reading above it so each
/// emission rises from the floor line rather than from the bottom of the plot.
void add_detector_traces(SpectrumPlot& plot, const Prediction& p, const ScanResult& scan, bool before = false) {
  const std::vector<Detector>& detectors = p.scenario.receiver.detectors;
  std::vector<std::vector<Detector>> groups;
  for (Detector d : detectors) {
    bool joined = false;
    for (auto& group : groups) {
      const bool same = std::all_of(scan.readings.begin(), scan.readings.end(), [&](const Reading& r) {
        return std::abs(r.level_db(d) - r.level_db(group.front())) < coincide_tolerance_db;
      });
      if (same) {
        group.push_back(d);
        joined = true;
        break;
      }
    }
    if (!joined) groups.push_back({d});
  }
  for (const auto& group : groups) {
    const Detector d = group.front();
    PlotTrace trace;
    std::vector<std::string> names;
    for (Detector member : group) {
      names.push_back(to_string(member));
      trace.detectors.push_back(to_string(member));
    }
    trace.label = (before ? "before: " : "") + join(names, " = ") + (group.size() > 1 ? " (coincide: one line drawn)" : "");
    trace.colour = before ? before_colour(d) : detector_colour(d);
    // Drawn widest first: where different detectors nearly agree all stay visible. The readings before
    // a change (design-filter --report) are light and dashed.
    trace.width_px = before ? 1.1 : d == Detector::peak ? 2.6 : d == Detector::quasi_peak ? 1.7 : 1.0;
    if (before) trace.dash = "5 3";
    const std::size_t n = scan.readings.size();
    auto on_floor = [&](std::size_t i) {
      return scan.noise_floor_db && scan.readings[i].level_db(d) <= *scan.noise_floor_db + at_floor_tolerance_db;
    };
    for (std::size_t i = 0; i < n; ++i) {
      const bool keep = !on_floor(i) || (i > 0 && !on_floor(i - 1)) || (i + 1 < n && !on_floor(i + 1));
      trace.frequency_hz.push_back(scan.readings[i].frequency_hz);
      trace.level.push_back(keep ? scan.readings[i].level_db(d) : std::numeric_limits<double>::quiet_NaN());
    }
    plot.traces.push_back(std::move(trace));
  }
}

/// The receiver's noise floor of `scan` as a line, with the plot's bottom a little under it.
void add_floor_trace(SpectrumPlot& plot, const ScanResult& scan) {
  if (scan.noise_floor_db) {
    // The receiver's noise floor: readings left out of the traces above lie on this line.
    PlotTrace floor;
    floor.label = "receiver noise floor (the readings between emissions)";
    floor.colour = "#8a8a8a";
    floor.width_px = 1.4;
    floor.frequency_hz = {plot.min_hz, plot.max_hz};
    floor.level = {*scan.noise_floor_db, *scan.noise_floor_db};
    plot.traces.push_back(std::move(floor));
    plot.y_min = std::floor((*scan.noise_floor_db - 5.0) / 10.0) * 10.0;
  }
}

/// The limit lines of the sets measuring `quantity` (and, for a radiated plot, at `distance_m`): a
/// colour per set, a dash pattern per detector.
void add_limit_traces(SpectrumPlot& plot, const Prediction& p, LimitQuantity quantity,
                      std::optional<double> distance_m) {
  std::size_t set_index = 0;
  for (const LimitSet& set : p.scenario.limits.sets) {
    if (set.measures != quantity) continue;
    if (distance_m && !(set.distance_m && std::abs(*set.distance_m - *distance_m) < 1e-9)) continue;
    const char* colour = limit_set_colours[set_index++ % std::size(limit_set_colours)];
    for (const LimitLine& line : set.lines) {
      PlotTrace trace;
      trace.label = line_label(set, line) + " limit";
      trace.colour = colour;
      trace.width_px = 2.0;
      trace.dash = detector_dash(line.detector);
      double previous_end = -1.0;
      for (const LimitSegment& seg : line.segments) {
        if (previous_end > 0 && std::abs(seg.from_hz - previous_end) > 1e-9 * seg.from_hz) {
          trace.frequency_hz.push_back(seg.from_hz);  // a gap between segments breaks the line
          trace.level.push_back(std::numeric_limits<double>::quiet_NaN());
        }
        trace.frequency_hz.push_back(seg.from_hz);
        trace.level.push_back(seg.start_level);
        trace.frequency_hz.push_back(seg.to_hz);
        trace.level.push_back(seg.end_level);
        previous_end = seg.to_hz;
      }
      plot.traces.push_back(std::move(trace));
    }
  }
}

/// Most markers on one plot: the worst emissions (judgement: more crowd the labels out).
constexpr std::size_t markers_per_plot = 5;

/// One marker per emission: the worst margins of `quantity` inside [low_hz, high_hz], each labelled
/// with its frequency, detector and margin. Readings within one receiver bandwidth of a marked one, or
/// of the same harmonic of the fundamental (the skirts and dither spread of one line), are the same
/// emission: only the worst is marked; so are lines too close to tell apart at the plot's scale.
void add_emission_markers(SpectrumPlot& plot, const Prediction& p, LimitQuantity quantity,
                          std::optional<double> distance_m, double low_hz, double high_hz, double bandwidth_hz) {
  const std::vector<LimitSet>& sets = p.scenario.limits.sets;
  auto at_distance = [&](const MarginRow& row) {
    if (!distance_m) return true;
    return row.set_index < sets.size() && sets[row.set_index].distance_m &&
           std::abs(*sets[row.set_index].distance_m - *distance_m) < 1e-9;
  };
  const double f0 = p.conducted ? p.conducted->fundamental_hz : p.switch_node_v.fundamental_hz;
  auto harmonic = [&](double f) { return f0 > 0.0 ? std::lround(f / f0) : -1L; };
  std::vector<MarginRow> rows;
  for (const MarginRow& row : p.margins.rows) {
    if (row.quantity == quantity && at_distance(row) && row.frequency_hz >= low_hz && row.frequency_hz <= high_hz) {
      rows.push_back(row);
    }
  }
  std::stable_sort(rows.begin(), rows.end(), [](const MarginRow& a, const MarginRow& b) { return a.margin_db < b.margin_db; });
  // Neighbouring harmonics closer than a fortieth of the plot's width (about 22 px at the report's
  // size) cannot be told apart on it: the worst of them stands for the group (judgement).
  const double min_separation_decades = std::log10(plot.max_hz / plot.min_hz) / 40.0;
  std::vector<MarginRow> kept;
  for (const MarginRow& row : rows) {
    if (kept.size() >= markers_per_plot) break;
    const bool same_emission = std::any_of(kept.begin(), kept.end(), [&](const MarginRow& k) {
      return std::abs(k.frequency_hz - row.frequency_hz) <= bandwidth_hz ||
             (f0 > 0.0 && harmonic(k.frequency_hz) == harmonic(row.frequency_hz)) ||
             std::abs(std::log10(k.frequency_hz / row.frequency_hz)) < min_separation_decades;
    });
    if (!same_emission) kept.push_back(row);
  }
  for (const MarginRow& row : kept) {
    plot.markers.push_back({row.frequency_hz, row.reading,
                            frequency_quantity(row.frequency_hz) + " " + detector_short(row.reading_detector) + " " +
                                signed_db(row.margin_db),
                            "#a8321f"});
  }
  plot.marker_legend = "worst reading of an emission (frequency, detector, margin)";
}

/// The data of a plot's hover readout (issue 19), as JSON for a <script type="application/json">
/// block: the plot area in SVG pixels, and for each pixel column of it that holds readings the
/// highest of them (the reading the column draws on top): its frequency, every detector's level and
/// whether that level is the receiver's noise floor, and each limit line's level and margin there.
/// Everything is computed here, with the same limit lines (LimitLine::level_at) as margins.csv; the
/// page's script only looks a column up and formats it. A margin is given only against a reading of
/// the line's own detector. Levels and margins rounded to 0.01 dB and frequencies to 0.1 Hz, as the
/// CSVs print them.
std::string readout_json(const Prediction& p, const SpectrumPlot& plot, const ScanResult& scan, LimitQuantity quantity,
                         std::optional<double> distance_m) {
  const PlotLayout layout = layout_spectrum_plot(plot);
  const std::vector<Detector>& detectors = p.scenario.receiver.detectors;
  nlohmann::ordered_json out;
  out["width"] = plot.width_px;
  out["height"] = plot.height_px;
  out["left"] = layout.plot_left;
  out["right"] = layout.plot_right;
  out["top"] = layout.plot_top;
  out["bottom"] = layout.plot_bottom;
  out["min_hz"] = plot.min_hz;
  out["max_hz"] = plot.max_hz;
  out["unit"] = quantity == LimitQuantity::radiated_field ? "dB\xC2\xB5V/m" : "dB\xC2\xB5V";
  out["detectors"] = nlohmann::ordered_json::array();
  for (Detector d : detectors) out["detectors"].push_back(to_string(d));
  // The limit lines the plot draws (add_limit_traces).
  std::vector<std::pair<const LimitSet*, const LimitLine*>> lines;
  out["limits"] = nlohmann::ordered_json::array();
  for (const LimitSet& set : p.scenario.limits.sets) {
    if (set.measures != quantity) continue;
    if (distance_m && !(set.distance_m && std::abs(*set.distance_m - *distance_m) < 1e-9)) continue;
    for (const LimitLine& line : set.lines) {
      lines.emplace_back(&set, &line);
      out["limits"].push_back({{"label", line_label(set, line) + " limit"},
                               {"detector", to_string(line.detector)},
                               {"unit", limit_unit_symbol(set)}});
    }
  }
  // The plot's log-frequency axis (core/output/plot.cpp): x = left + (log f − log min) / (log max − log min) · width.
  const double log_min = std::log10(plot.min_hz), log_span = std::log10(plot.max_hz) - log_min;
  auto x_of = [&](double frequency_hz) {
    return layout.plot_left + (std::log10(frequency_hz) - log_min) / log_span * (layout.plot_right - layout.plot_left);
  };
  auto highest = [&](const Reading& r) {
    double level = -std::numeric_limits<double>::infinity();
    for (Detector d : detectors) level = std::max(level, r.level_db(d));
    return level;
  };
  // The highest reading of each pixel column, in ascending frequency.
  std::vector<const Reading*> chosen;
  long column = std::numeric_limits<long>::min();
  for (const Reading& r : scan.readings) {
    if (r.frequency_hz < plot.min_hz || r.frequency_hz > plot.max_hz) continue;
    const long c = static_cast<long>(std::floor(x_of(r.frequency_hz)));
    if (chosen.empty() || c != column) {
      chosen.push_back(&r);
      column = c;
    } else if (highest(r) > highest(*chosen.back())) {
      chosen.back() = &r;
    }
  }
  auto json_level = [](double level_db) -> nlohmann::ordered_json {
    if (!std::isfinite(level_db) || level_db <= level_floor_db) return nullptr;
    return rounded(level_db, 2);
  };
  auto& f = out["f"] = nlohmann::ordered_json::array();
  auto& levels = out["levels"] = nlohmann::ordered_json::array();
  auto& floor = out["floor"] = nlohmann::ordered_json::array();
  auto& limit = out["limit"] = nlohmann::ordered_json::array();
  auto& margin = out["margin"] = nlohmann::ordered_json::array();
  for (const Reading* r : chosen) {
    f.push_back(rounded(r->frequency_hz, 1));
    nlohmann::ordered_json row_levels = nlohmann::ordered_json::array(), row_floor = nlohmann::ordered_json::array();
    for (Detector d : detectors) {
      row_levels.push_back(json_level(r->level_db(d)));
      row_floor.push_back(at_noise_floor(r->level_db(d), scan.noise_floor_db) ? 1 : 0);
    }
    nlohmann::ordered_json row_limit = nlohmann::ordered_json::array(), row_margin = nlohmann::ordered_json::array();
    for (const auto& [set, line] : lines) {
      const std::optional<double> level = line->level_at(r->frequency_hz);
      const bool read = std::find(detectors.begin(), detectors.end(), line->detector) != detectors.end();
      const double reading = r->level_db(line->detector);
      row_limit.push_back(level ? nlohmann::ordered_json(rounded(*level, 2)) : nlohmann::ordered_json(nullptr));
      row_margin.push_back(level && read && std::isfinite(reading) && reading > level_floor_db
                               ? nlohmann::ordered_json(rounded(*level - reading, 2))
                               : nlohmann::ordered_json(nullptr));
    }
    levels.push_back(std::move(row_levels));
    floor.push_back(std::move(row_floor));
    limit.push_back(std::move(row_limit));
    margin.push_back(std::move(row_margin));
  }
  // Inside <script> the text must not hold "</": '<' occurs only in strings, where \u003c is the same.
  std::string text = out.dump();
  std::string safe;
  safe.reserve(text.size());
  for (char c : text) {
    if (c == '<') {
      safe += "\\u003c";
    } else {
      safe += c;
    }
  }
  return safe;
}

}  // namespace

SpectrumPlot readings_plot(const Prediction& p, const BandScan& scan, const BandScan* before) {
  const BandParameters band = band_parameters(scan.band);
  SpectrumPlot plot;
  plot.title = "Receiver readings at the LISN, CISPR band " + to_string(scan.band) + " (worst of the lines)";
  plot.min_hz = band.start_hz;
  plot.max_hz = band.stop_hz;
  add_detector_traces(plot, p, scan.worst);
  if (before) add_detector_traces(plot, p, before->worst, true);
  add_floor_trace(plot, scan.worst);
  add_limit_traces(plot, p, LimitQuantity::conducted_voltage, std::nullopt);
  for (const BandReception& b : p.reception) {
    if (b.band.high_hz <= plot.min_hz || b.band.low_hz >= plot.max_hz) continue;
    plot.spans.push_back({b.band.name, b.band.low_hz, b.band.high_hz, "#e8d9ae"});
  }
  add_emission_markers(plot, p, LimitQuantity::conducted_voltage, std::nullopt, band.start_hz, band.stop_hz,
                       scan.worst.bandwidth_6db_hz);
  return plot;
}

std::string readings_plot_file(const BandScan& scan) { return "scan-" + to_string(scan.band) + ".svg"; }

SpectrumPlot radiated_plot(const Prediction& p, const RadiatedScan& scan) {
  const BandParameters band = band_parameters(scan.band);
  SpectrumPlot plot;
  plot.title = "Radiated field estimate at " + format_quantity(scan.distance_m, Dimension::length) + ", CISPR band " +
               to_string(scan.band);
  plot.y_label = "field (dB\xC2\xB5V/m)";
  plot.min_hz = band.start_hz;
  plot.max_hz = band.stop_hz;
  add_detector_traces(plot, p, scan.scan);
  add_floor_trace(plot, scan.scan);
  add_limit_traces(plot, p, LimitQuantity::radiated_field, scan.distance_m);
  for (const BandReception& b : p.reception) {
    if (b.band.high_hz <= plot.min_hz || b.band.low_hz >= plot.max_hz) continue;
    plot.spans.push_back({b.band.name, b.band.low_hz, b.band.high_hz, "#e8d9ae"});
  }
  add_emission_markers(plot, p, LimitQuantity::radiated_field, scan.distance_m, band.start_hz, band.stop_hz,
                       scan.scan.bandwidth_6db_hz);
  return plot;
}

/// A harmonic more than this above the plain trapezoid's envelope is marked as exceeding it [dB]
/// (above the rounding of the two computations, judgement).
constexpr double envelope_excess_shown_db = 0.05;

SpectrumPlot source_plot(const Prediction& p) {
  const bool voltage = !p.switch_node_v.harmonics.empty() || p.input_current_a.harmonics.empty();
  const LineSpectrum& lines = voltage ? p.switch_node_v : p.input_current_a;
  SpectrumPlot plot;
  plot.title = std::string(voltage ? "Switch-node voltage" : "Input current") + ": harmonics at the source";
  plot.y_label = "level (" + level_unit(lines.quantity) + ")";
  const double f0 = lines.fundamental_hz > 0 ? lines.fundamental_hz : 100e3;
  plot.min_hz = std::pow(10.0, std::floor(std::log10(f0)));
  plot.max_hz = lines.harmonics.empty() ? f0 * 10 : std::max(lines.frequency_hz(lines.harmonics.size() - 1), f0 * 10);
  PlotTrace stems;
  stems.label = "harmonic (RMS)";
  stems.stems = true;
  stems.colour = peak_colour;
  stems.width_px = 1.0;
  for (std::size_t k = 0; k < lines.harmonics.size(); ++k) {
    stems.frequency_hz.push_back(lines.frequency_hz(k));
    stems.level.push_back(volts_to_dbuv(std::abs(lines.harmonics[k])));
  }
  double top = level_floor_db;
  for (double level : stems.level) top = std::max(top, level);
  plot.traces.push_back(std::move(stems));
  if (p.scenario.switching) {
    const SwitchingSpec& spec = *p.scenario.switching;
    PlotTrace envelope;
    // The envelope of the plain trapezoid (C. R. Paul §3.2): ringing adds lines above it, so it is
    // no bound of this source when it rings; those lines are marked below.
    envelope.label = "plain trapezoid's envelope (no ringing)";
    envelope.colour = quasi_peak_colour;
    envelope.dash = "7 4";
    envelope.width_px = 1.8;
    const double amplitude = voltage ? spec.amplitude_v : spec.current_a;
    constexpr int points = 400;
    for (int i = 0; i <= points; ++i) {
      const double f = plot.min_hz * std::pow(plot.max_hz / plot.min_hz, static_cast<double>(i) / points);
      envelope.frequency_hz.push_back(f);
      envelope.level.push_back(volts_to_dbuv(trapezoid_envelope_rms(spec, amplitude, f)));
      top = std::max(top, envelope.level.back());
    }
    plot.traces.push_back(std::move(envelope));
    // Harmonics above the plain trapezoid's envelope (ringing), drawn over the others, and the
    // largest excess marked with its value.
    PlotTrace above;
    above.label = "above the plain trapezoid's envelope (ringing)";
    above.stems = true;
    above.colour = "#a8321f";
    above.width_px = 1.6;
    std::optional<PlotMarker> worst;
    double worst_excess_db = 0.0;
    for (std::size_t k = 0; k < lines.harmonics.size(); ++k) {
      const double f = lines.frequency_hz(k);
      const double level = volts_to_dbuv(std::abs(lines.harmonics[k]));
      const double excess_db = level - volts_to_dbuv(trapezoid_envelope_rms(spec, amplitude, f));
      if (!(excess_db > envelope_excess_shown_db)) continue;
      above.frequency_hz.push_back(f);
      above.level.push_back(level);
      if (excess_db > worst_excess_db) {
        worst_excess_db = excess_db;
        worst = PlotMarker{f, level, signed_db(excess_db, 1) + " over the envelope", "#a8321f"};
      }
    }
    if (!above.frequency_hz.empty()) plot.traces.push_back(std::move(above));
    if (worst) plot.markers.push_back(*worst);
    plot.marker_legend = "largest excess over the envelope";
  }
  if (top > level_floor_db) {
    plot.y_max = std::ceil((top + 8.0) / 10.0) * 10.0;
    plot.y_min = *plot.y_max - 120.0;
  }
  for (const BandReception& b : p.reception) {
    if (b.band.high_hz <= plot.min_hz || b.band.low_hz >= plot.max_hz) continue;
    plot.spans.push_back({b.band.name, b.band.low_hz, b.band.high_hz, "#e8d9ae"});
  }
  return plot;
}

ChannelStrip channel_strip(const BandReception& b) {
  ChannelStrip strip;
  strip.title = b.band.name;
  strip.low_hz = b.band.low_hz;
  strip.high_hz = b.band.high_hz;
  strip.raster_hz = b.band.raster_hz;
  strip.not_computed = b.verdict == ReceptionVerdict::not_computed;
  for (const ChannelReception& c : b.channels) strip.channels.push_back({c.centre_hz, reception_verdict_name(c.verdict)});
  return strip;
}

/// "10m", "3m": the distance in a file name.
std::string radiated_distance_name(double distance_m) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%gm", distance_m);
  return buffer;
}

// ---------------------------------------------------------------------------------------------
// The page.

const std::vector<std::string>& report_section_ids() {
  static const std::vector<std::string> ids{"verdict", "plots",  "changes",     "margins", "bands",
                                            "pre-lab", "safety", "assumptions", "inputs",  "files"};
  return ids;
}

namespace {

constexpr const char* page_css = R"css(
:root { --paper:#f4f2ec; --card:#fbfaf6; --ink:#22303a; --soft:#5b6770; --rule:#d9d5ca;
        --pass:#2f7a4a; --marginal:#a86b00; --fail:#a8321f; --accent:#3f8fa6; }
* { box-sizing: border-box; }
body { margin:0; background:var(--paper); color:var(--ink);
       font: 15px/1.5 'DejaVu Sans','Liberation Sans',Arial,sans-serif; }
main { max-width: 1040px; margin: 0 auto; padding: 28px 24px 48px; }
header .kicker { margin:0; color:var(--soft); letter-spacing:.08em; text-transform:uppercase; font-size:12px; }
h1 { margin: 4px 0 6px; font-size: 26px; }
h2 { margin: 0 0 12px; font-size: 19px; border-bottom: 2px solid var(--rule); padding-bottom: 4px; }
h3 { margin: 16px 0 6px; font-size: 15px; }
section { background:var(--card); border:1px solid var(--rule); border-radius:6px; padding:16px 20px; margin:18px 0; }
.verdict { border-left:10px solid var(--soft); }
.verdict-head { display:flex; gap:16px; align-items:center; }
.verdict .not-computed { border-left:4px solid var(--fail); padding-left:12px; margin-top:10px; }
.band-summary { margin:10px 0 0; }
.verdict .word { font-size: 28px; font-weight: bold; letter-spacing:.04em; }
.verdict.pass { border-left-color:var(--pass); } .verdict.pass .word { color:var(--pass); }
.verdict.marginal { border-left-color:var(--marginal); } .verdict.marginal .word { color:var(--marginal); }
.verdict.fail { border-left-color:var(--fail); } .verdict.fail .word { color:var(--fail); }
.verdict.incomplete { border-left-color:var(--marginal); } .verdict.incomplete .word { color:var(--marginal); }
.verdict.no-limits .word { color:var(--soft); }
table { border-collapse: collapse; width: 100%; font-size: 13.5px; }
th, td { text-align:left; padding: 4px 8px; border-bottom: 1px solid var(--rule); vertical-align: top; }
th { background:#ece8dd; font-weight: 600; }
td.num { text-align:right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td.section { color: var(--soft); white-space: nowrap; }
.tag { display:inline-block; padding:0 8px; border-radius:10px; font-size:12px; font-weight:bold; }
.tag.pass, .tag.clear { background:#d5ead9; color:var(--pass); }
.tag.marginal, .tag.watch { background:#f5e3b3; color:var(--marginal); }
.tag.fail, .tag.noisy { background:#f2d0c8; color:var(--fail); }
.tag.not { background:#e4e1d8; color:var(--soft); }
figure { margin: 0 0 18px; }
figure.channel-strip { margin: 0 0 6px; }
figure svg { width:100%; height:auto; border:1px solid var(--rule); border-radius:4px; background:#fbfaf6; }
figcaption { color: var(--soft); font-size: 13px; margin-top: 4px; }
.practice { color: var(--soft); font-style: italic; }
.caution { border-left: 10px solid var(--fail); }
ul { margin: 6px 0; padding-left: 22px; }
code { font-family: 'DejaVu Sans Mono','Liberation Mono',monospace; font-size: 13px; }
footer { color: var(--soft); font-size: 12px; text-align:center; margin-top: 24px; }
@media print {
  * { position: static !important; box-shadow: none !important; }
  :root { --paper:#fff; --card:#fff; --ink:#000; --soft:#333; --rule:#999; }
  body { background:#fff; color:#000; font-size: 11pt; }
  main { max-width:none; padding:0; }
  section { border:none; border-radius:0; padding:0; margin:0 0 12pt; }
  #plots, #changes, #margins, #bands, #pre-lab, #safety, #assumptions, #inputs, #files { break-before: page; }
  figure, svg, tr, .verdict-head, .not-computed { break-inside: avoid; }
  h2, h3 { break-after: avoid; }
  th { background:#fff; }
  .tag { border:1px solid #000; background:#fff !important; color:#000 !important; }
  .verdict .word, .verdict .not-computed { color:#000 !important; }
  a { color:#000; }
  .switches, .readout { display:none; }
}
.switches { display:flex; flex-wrap:wrap; gap:4px 16px; margin:0 0 6px; font-size:13px; color:var(--soft); }
.switches label { cursor:pointer; }
.readout { margin:4px 0 0; min-height:1.5em; font-size:13px; font-variant-numeric: tabular-nums; }
.readout span + span::before { content:" \00b7  "; color:var(--soft); }
.readout .f { margin-right:10px; }
)css";

/// The page's only script (issue 19): the hover readout and the detector switches of the readings
/// and radiated plots. What it shows comes from the JSON block beside each plot (readout_json); it
/// fetches nothing and computes no level. The switches and the readout line are made by the script,
/// so a page read without script (or printed) is the same page without them.
constexpr const char* page_script = R"js(
"use strict";
(function () {
  const svgNs = "http://www.w3.org/2000/svg";
  const prefixes = [[1e9, "G"], [1e6, "M"], [1e3, "k"], [1, ""]];
  // 4 significant digits with the SI prefix, trailing zeros dropped (as the page's tables).
  function frequencyText(hz) {
    for (const [scale, prefix] of prefixes) {
      const value = Number((hz / scale).toPrecision(4));
      if (Math.abs(value) >= 1 || scale === 1) return value + " " + prefix + "Hz";
    }
    return hz + " Hz";
  }
  function levelText(db) { return db.toFixed(1); }
  // A margin keeps its sign when it rounds to zero, with a true minus sign.
  function marginText(db) {
    const text = Math.abs(db).toFixed(1);
    return (db < 0 ? "\u2212" : "") + text + " dB";
  }
  function add(parent, tag, attributes, text) {
    const e = document.createElement(tag);
    for (const k in attributes) e.setAttribute(k, attributes[k]);
    if (text !== undefined) e.textContent = text;
    parent.appendChild(e);
    return e;
  }
  // The column whose frequency is nearest `hz` on the log axis.
  function nearest(f, hz) {
    let lo = 0, hi = f.length - 1;
    while (hi - lo > 1) {
      const mid = (lo + hi) >> 1;
      if (f[mid] <= hz) lo = mid; else hi = mid;
    }
    return Math.abs(Math.log(f[lo] / hz)) <= Math.abs(Math.log(f[hi] / hz)) ? lo : hi;
  }
  document.querySelectorAll("figure.readout-plot").forEach(function (figure) {
    const block = figure.querySelector("script.readout-data");
    const svg = figure.querySelector("svg");
    if (!block || !svg) return;
    const d = JSON.parse(block.textContent);
    if (d.f.length === 0) return;
    // One switch per drawn group of detectors: detectors whose readings coincide are one line, so
    // they are switched together ("peak = quasi-peak = average").
    const groups = [];
    svg.querySelectorAll("path[data-detectors]").forEach(function (e) {
      const group = e.getAttribute("data-detectors");
      if (groups.indexOf(group) < 0) groups.push(group);
    });
    const on = {};
    const shown = {};
    const switches = document.createElement("div");
    switches.className = "switches";
    switches.setAttribute("role", "group");
    switches.setAttribute("aria-label", "detectors drawn");
    add(switches, "span", {}, "show:");
    groups.forEach(function (group) {
      on[group] = true;
      const label = add(switches, "label", {});
      const box = add(label, "input", {type: "checkbox", value: group, "data-detectors": group});
      box.checked = true;
      label.appendChild(document.createTextNode(" " + group.split(" ").join(" = ")));
      box.addEventListener("change", function () {
        on[group] = box.checked;
        redraw();
      });
    });
    // A detector is shown while a switched-on group draws it.
    function update() {
      d.detectors.forEach(function (name) {
        shown[name] = groups.some(function (g) { return on[g] && g.split(" ").indexOf(name) >= 0; });
      });
    }
    update();
    figure.insertBefore(switches, svg);
    const readout = document.createElement("p");
    readout.className = "readout";
    readout.setAttribute("aria-live", "polite");
    readout.textContent = "Point at the plot (or focus it and use the arrow keys) for the readings at a frequency.";
    svg.after(readout);
    const cursor = document.createElementNS(svgNs, "line");
    cursor.setAttribute("y1", d.top);
    cursor.setAttribute("y2", d.bottom);
    cursor.setAttribute("stroke", "#22303a");
    cursor.setAttribute("stroke-width", "1");
    cursor.setAttribute("stroke-dasharray", "3 2");
    cursor.setAttribute("pointer-events", "none");
    cursor.setAttribute("visibility", "hidden");
    svg.appendChild(cursor);
    let current = -1;

    function show(i) {
      current = i;
      const x = d.left + Math.log(d.f[i] / d.min_hz) / Math.log(d.max_hz / d.min_hz) * (d.right - d.left);
      cursor.setAttribute("x1", x);
      cursor.setAttribute("x2", x);
      cursor.setAttribute("visibility", "visible");
      readout.textContent = "";
      readout.setAttribute("data-frequency-hz", d.f[i]);
      add(readout, "strong", {class: "f"}, frequencyText(d.f[i]));
      d.detectors.forEach(function (name, k) {
        const level = d.levels[i][k];
        if (!shown[name] || level === null) return;
        add(readout, "span", {"data-detector": name},
            name + " " + levelText(level) + " " + d.unit + (d.floor[i][k] ? " (noise floor)" : ""));
      });
      d.limits.forEach(function (line, k) {
        const limit = d.limit[i][k];
        if (limit === null) return;
        const margin = d.margin[i][k];
        const floor = d.floor[i][d.detectors.indexOf(line.detector)];
        add(readout, "span", {"data-limit": k},
            line.label + " " + levelText(limit) + " " + line.unit +
            (margin !== null && shown[line.detector] ? ", margin " + (floor ? "\u2265 " : "") + marginText(margin) : ""));
      });
    }
    function redraw() {
      update();
      svg.querySelectorAll("[data-detectors]").forEach(function (e) {
        const off = on[e.getAttribute("data-detectors")] === false;
        if (e.classList.contains("legend-item")) e.style.opacity = off ? "0.35" : "";
        else e.style.display = off ? "none" : "";
      });
      if (current >= 0) show(current);
    }
    svg.addEventListener("pointermove", function (event) {
      const matrix = svg.getScreenCTM();
      if (!matrix) return;
      const p = new DOMPoint(event.clientX, event.clientY).matrixTransform(matrix.inverse());
      if (p.x < d.left || p.x > d.right || p.y < d.top || p.y > d.bottom) return;
      show(nearest(d.f, d.min_hz * Math.pow(d.max_hz / d.min_hz, (p.x - d.left) / (d.right - d.left))));
    });
    svg.setAttribute("tabindex", "0");
    svg.addEventListener("keydown", function (event) {
      const step = event.key === "ArrowRight" ? 1 : event.key === "ArrowLeft" ? -1 : 0;
      if (step === 0) return;
      event.preventDefault();
      show(Math.min(d.f.length - 1, Math.max(0, (current < 0 ? 0 : current + step))));
    });
  });
})();
)js";

std::string tag(const std::string& text) { return "<span class=\"tag " + html(text) + "\">" + html(text) + "</span>"; }

/// Mode shares at the LISN ports, V_DM = (V1 − V2)/2, V_CM = (V1 + V2)/2 (docs/references.md §2.3).
std::string contributors_table(const std::vector<Contributor>& list) {
  std::string out = "<table><tr><th>frequency</th><th>DM share</th><th>CM share</th>"
                    "<th>source</th><th>controlled by</th></tr>\n";
  for (const Contributor& c : list) {
    char dm[16], cm[16];
    std::snprintf(dm, sizeof dm, "%.0f %%", 100.0 * c.dm_share);
    std::snprintf(cm, sizeof cm, "%.0f %%", 100.0 * c.cm_share);
    out += "<tr><td class=\"num\">" + html(frequency_quantity(c.frequency_hz)) +
           "</td><td class=\"num\">" + dm + "</td><td class=\"num\">" + cm + "</td><td>" + html(c.source) +
           "</td><td>" + html(c.path) + (c.conversion.empty() ? "" : "; " + html(c.conversion)) + "</td></tr>\n";
  }
  return out + "</table>\n";
}

std::string margin_table(const Prediction& p, const std::vector<WorstFrequency>& rows) {
  std::string out = "<table>\n<tr><th>frequency</th><th>detector</th><th>reading</th><th>limit</th><th>margin</th>"
                    "<th>U<sub>cispr</sub></th><th>line</th><th>verdict</th></tr>\n";
  for (const WorstFrequency& w : rows) {
    const MarginRow& r = w.row;
    out += "<tr><td class=\"num\">" + html(frequency_quantity(r.frequency_hz)) + "</td><td>" +
           html(to_string(r.reading_detector)) + "</td><td class=\"num\">" + page_level_text(r.reading) + " " +
           row_unit_symbol(r) + (r.quantity == LimitQuantity::radiated_field ? " (estimate)" : "") +
           "</td><td class=\"num\">" + page_level_text(r.limit) + " " + row_unit_symbol(r) + "</td><td class=\"num\">" +
           html(signed_db(r.margin_db)) + "</td><td class=\"num\">" +
           (r.uncertainty_db ? html(fixed(*r.uncertainty_db, 1) + " dB") : "\xE2\x80\x94") + "</td><td>" +
           html(r.limit_label) + "</td><td>" + tag(to_string(verdict_for(r.margin_db, p.margins.guard_db))) +
           "</td></tr>\n";
  }
  return out + "</table>\n";
}

}  // namespace

std::string report_html(const Prediction& p, const std::vector<std::string>& files, const Prediction* before) {
  const Scenario& s = p.scenario;
  std::string verdict = to_string(p.verdict);
  std::replace(verdict.begin(), verdict.end(), ' ', '-');  // a CSS class ("no-limits")
  std::string out;
  out += "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n";
  out += "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n";
  out += "<title>spurcast report: " + html(s.title.empty() ? s.file : s.title) + "</title>\n";
  out += "<style>" + std::string(page_css) + "</style>\n</head>\n<body>\n<main>\n";
  out += "<header>\n<p class=\"kicker\">spurcast prediction report</p>\n<h1>" + html(s.title.empty() ? s.file : s.title) +
         "</h1>\n";
  if (!s.description.empty()) out += "<p>" + html(s.description) + "</p>\n";
  out += "</header>\n";

  // The answer first (issue 19): the verdict with its one-line reason, what was not computed, and
  // the broadcast bands' verdicts in one line; everything else follows in the order of use.
  std::string verdict_html = "<section id=\"verdict\" class=\"verdict " + verdict +
                             "\">\n<h2 hidden>Verdict</h2>\n<div class=\"verdict-head\"><span class=\"word\">" +
                             verdict_word(p.verdict) + "</span>\n<span>" + html(verdict_sentence(p)) + ".</span></div>\n";
  if (const std::vector<std::string> missing = not_computed_lines(p); !missing.empty()) {
    verdict_html += "<div class=\"not-computed\">\n<h3>Not computed</h3>\n<ul>\n";
    for (const std::string& line : missing) verdict_html += "<li>" + html(line) + "</li>\n";
    verdict_html += "</ul>\n</div>\n";
  }
  if (!p.reception.empty()) {
    verdict_html += "<p class=\"band-summary\">Broadcast bands:";
    for (const BandReception& b : p.reception) {
      verdict_html += " " + html(b.band.name) + " " + tag(reception_verdict_name(b.verdict));
    }
    verdict_html += "</p>\n";
  }
  verdict_html += "</section>\n";

  // Appendix: the inputs.
  std::string inputs_html;
  inputs_html += "<section id=\"inputs\">\n<h2>Appendix: inputs</h2>\n<table>\n<tr><th>section</th><th>input</th><th>value</th></tr>\n";
  std::string last_section;
  for (const ScenarioInput& row : scenario_inputs(s)) {
    inputs_html += "<tr><td class=\"section\">" + (row.section == last_section ? std::string() : html(row.section)) +
           "</td><td>" + html(row.name) + "</td><td>" + html(row.value) + "</td></tr>\n";
    last_section = row.section;
  }
  inputs_html += "</table>\n<p>LISN set-up the levels refer to: " + html(p.setup_description) + "</p>\n</section>\n";

  // The plots.
  std::string plots_html;
  plots_html += "<section id=\"plots\">\n<h2>Plots</h2>\n";
  int figure = 1;
  for (const BandScan& scan : p.scans) {
    const BandScan* earlier = before ? before_scan(*before, scan.band) : nullptr;
    const SpectrumPlot plot = readings_plot(p, scan, earlier);
    plots_html += "<figure class=\"readout-plot\">\n" + spectrum_plot_svg(plot) +
                  "<script type=\"application/json\" class=\"readout-data\">" +
                  readout_json(p, plot, scan.worst, LimitQuantity::conducted_voltage, std::nullopt) +
                  "</script>\n<figcaption>Figure " +
           std::to_string(figure++) +
           ". Peak, quasi-peak and average readings of a CISPR 16-1-1 receiver at the LISN port (the higher of the "
           "lines at each frequency) against the limit lines; broadcast bands shaded; the worst readings marked with "
           "their margin to the line of their detector" +
           (earlier ? std::string("; dashed and light: the readings before the change") : std::string()) +
           ".</figcaption>\n</figure>\n";
  }
  for (const RadiatedScan& scan : p.radiated_scans) {
    const SpectrumPlot plot = radiated_plot(p, scan);
    plots_html += "<figure class=\"readout-plot\">\n" + spectrum_plot_svg(plot) +
                  "<script type=\"application/json\" class=\"readout-data\">" +
                  readout_json(p, plot, scan.scan, LimitQuantity::radiated_field, scan.distance_m) +
                  "</script>\n<figcaption>Figure " +
                  std::to_string(figure++) +
                  ". The estimated radiated field read by the receiver (an estimate from the cable and hot-loop "
                  "currents) against the radiated limit lines at the same distance; the worst emissions marked with "
                  "their margin.</figcaption>\n</figure>\n";
  }
  plots_html += "<figure>\n" + spectrum_plot_svg(source_plot(p)) + "<figcaption>Figure " + std::to_string(figure++) +
         ". Harmonic lines of the source (RMS)" +
         (s.switching ? std::string(" with the envelope of the plain trapezoid of C. R. Paul, without ringing (flat, "
                                    "then \xE2\x88\x92" "20 dB per decade above 1/(\xCF\x80\xCF\x84), \xE2\x88\x92"
                                    "40 dB per decade above 1/(\xCF\x80t<sub>r</sub>)); it is not a bound when the "
                                    "source rings: harmonics above it are drawn red and the largest excess is marked")
                      : std::string()) +
         (p.source_kind == SourceKind::dithered ? ". Dithered source: the undithered lines are shown" : "") +
         ".</figcaption>\n</figure>\n</section>\n";

  // What to change: the planner's before and after (design-filter --report), what makes the worst
  // readings (mode shares, source and path), then where the other commands take it further.
  std::string changes_html = "<section id=\"changes\">\n<h2>What to change</h2>\n";
  if (before) {
    // Worst margin per limit-line detector, before and after the change (same lines, same guard).
    changes_html += "<h3 id=\"before-after\">Before and after</h3>\n<table>\n<tr><th>line detector</th><th>before</th>"
           "<th>at</th><th>after</th><th>at</th><th>change</th></tr>\n";
    for (const DetectorMargin& a : p.margins.worst_per_detector) {
      const DetectorMargin* b = nullptr;
      for (const DetectorMargin& d : before->margins.worst_per_detector) {
        if (d.detector == a.detector) b = &d;
      }
      changes_html += "<tr><td>" + html(to_string(a.detector)) + "</td><td class=\"num\">" +
             (b ? html(signed_db(b->worst.margin_db)) : std::string("not computed")) + "</td><td class=\"num\">" +
             (b ? html(frequency_quantity(b->worst.frequency_hz)) : std::string()) + "</td><td class=\"num\">" +
             html(signed_db(a.worst.margin_db)) + "</td><td class=\"num\">" +
             html(frequency_quantity(a.worst.frequency_hz)) + "</td><td class=\"num\">" +
             (b ? html(signed_db(a.worst.margin_db - b->worst.margin_db)) : std::string()) + "</td></tr>\n";
    }
    changes_html += "</table>\n<p>Before: " + html(verdict_word(before->verdict)) + "; after: " + html(verdict_word(p.verdict)) +
           ".</p>\n";
  }
  if (!p.contributors.empty()) {
    changes_html += "<h3>What makes the worst readings</h3>\n" + contributors_table(p.contributors);
  } else {
    changes_html += "<p>No conducted reading was compared with a limit line, so no contributor was traced.</p>\n";
  }
  if (!p.contributors_requested.empty()) {
    changes_html += "<h3 id=\"explained\">At the frequencies asked for</h3>\n<p>The make-up of the strongest line within the "
           "receiver bandwidth of each frequency given with <code>--explain-at</code>.</p>\n" +
           contributors_table(p.contributors_requested);
  }
  changes_html += "<p>The dB each input moves the worst margin: <code>spurcast sensitivity</code>; a filter that "
                  "meets the lines: <code>spurcast design-filter</code>; a switching frequency that clears the "
                  "broadcast bands: <code>spurcast sweep</code>.</p>\n</section>\n";

  // Margins.
  std::string margins_html;
  margins_html += "<section id=\"margins\">\n<h2>Margins</h2>\n";
  if (const std::string warning = single_path_warning(p); !warning.empty()) {
    margins_html += "<p class=\"caution\"><strong>" + html(warning) + ".</strong></p>\n";
  }
  margins_html += "<p>Margin = limit \xE2\x88\x92 reading; guard band " + html(signed_db(p.margins.guard_db, 1)) +
         " (a margin under it is <em>marginal</em>). " + std::to_string(p.margins.compared_readings) + " of " +
         std::to_string(p.margins.readings) + " readings compared";
  if (p.margins.not_compared > 0) {
    margins_html += "; " + std::to_string(p.margins.not_compared) +
           " were not compared (no line for their detector, or outside the lines' frequencies)";
  }
  margins_html += ".</p>\n";
  if (!p.margins.worst_per_detector.empty()) {
    margins_html += "<h3>Worst margin per detector of the limit line</h3>\n<table>\n<tr><th>line detector</th><th>worst margin</th>"
           "<th>at</th><th>reading</th><th>line</th><th>comparisons</th></tr>\n";
    for (const DetectorMargin& d : p.margins.worst_per_detector) {
      margins_html += "<tr><td>" + html(to_string(d.detector)) + "</td><td class=\"num\">" + html(signed_db(d.worst.margin_db)) +
             "</td><td class=\"num\">" + html(frequency_quantity(d.worst.frequency_hz)) + "</td><td>" +
             html(to_string(d.worst.reading_detector)) + " " + page_level_text(d.worst.reading) + " " +
             row_unit_symbol(d.worst) + "</td><td>" +
             html(d.worst.limit_label) + "</td><td class=\"num\">" + std::to_string(d.comparisons) + "</td></tr>\n";
    }
    margins_html += "</table>\n";
    margins_html += "<h3>The worst frequencies</h3>\n" + margin_table(p, worst_frequencies(p, 10));
  } else {
    margins_html += "<p>No reading was compared with a limit line.</p>\n";
  }
  margins_html += "</section>\n";

  // Broadcast bands.
  std::string bands_html;
  bands_html += "<section id=\"bands\">\n<h2>Broadcast bands</h2>\n";
  bands_html += "<p>Estimated field of the harmonics for " + html(p.reception_assumptions) + "; ITU region " +
         std::to_string(s.broadcast.region) +
         ". <em>clear</em>: under the ambient man-made noise (ITU-R P.372) or the level the receiver rejects; "
         "<em>watch</em>: above it, below the disturbance threshold; <em>noisy</em>: a weak station is likely "
         "disturbed. A ferrite rod (LW, MW) reads the magnetic field as its equivalent far field, "
         "&eta;<sub>0</sub>&middot;H; a whip reads the electric field.</p>\n";
  bands_html += "<table>\n<tr><th>band</th><th>range</th><th>antenna</th><th>verdict</th><th>worst channel</th><th>field</th>"
         "<th>ambient</th><th>noisy above</th><th>main radiator</th><th>notes</th></tr>\n";
  std::vector<std::string> caveats;  // distinct caveats, numbered once below the table
  for (const BandReception& b : p.reception) {
    bands_html += "<tr><td>" + html(b.band.name) + "</td><td class=\"num\">" +
           html(format_quantity(b.band.low_hz, Dimension::frequency, band_edge_digits) + " \xE2\x80\x93 " +
                format_quantity(b.band.high_hz, Dimension::frequency, band_edge_digits)) +
           "</td><td>" + html(antenna_name(b.antenna)) + "</td><td>" + tag(reception_verdict_name(b.verdict)) + "</td>";
    if (b.worst_channel) {
      const ChannelReception& c = b.channels[*b.worst_channel];
      bands_html += "<td class=\"num\">" + html(frequency_quantity(c.centre_hz)) + "</td><td class=\"num\">" +
             page_level_text(c.level_dbuvm) + " dB\xC2\xB5V/m</td><td class=\"num\">" + page_level_text(c.ambient_dbuvm) +
             " dB\xC2\xB5V/m</td><td class=\"num\">" + page_level_text(c.noisy_above_dbuvm) + " dB\xC2\xB5V/m</td><td>" +
             (c.dominant_radiator
                  ? html(radiator_name(*c.dominant_radiator)) + " (" +
                        std::to_string(static_cast<int>(std::lround(100.0 * c.radiator_share[static_cast<std::size_t>(*c.dominant_radiator)]))) + " %)"
                  : std::string()) +
             "</td>";
    } else {
      bands_html += "<td>\xE2\x80\x94</td><td>no line heard</td><td></td><td></td><td></td>";
    }
    std::vector<std::string> refs;
    for (const std::string& caveat : b.caveats) {
      auto it = std::find(caveats.begin(), caveats.end(), caveat);
      if (it == caveats.end()) it = caveats.insert(caveats.end(), caveat);
      refs.push_back("[" + std::to_string(it - caveats.begin() + 1) + "]");
    }
    bands_html += "<td>" + join(refs, " ") + "</td></tr>\n";
  }
  bands_html += "</table>\n";
  if (!caveats.empty()) {
    bands_html += "<ol class=\"caveats\">\n";
    for (const std::string& caveat : caveats) bands_html += "<li>" + html(caveat) + "</li>\n";
    bands_html += "</ol>\n";
  }
  if (!p.reception.empty()) {
    bands_html += "<h3>Channels of each band</h3>\n<p>Each channel that hears a line is a block coloured by its "
                  "verdict; the rest of the band (white) hears none. The counts beside each strip say the same in "
                  "words.</p>\n";
    for (const BandReception& b : p.reception) {
      bands_html += "<figure class=\"channel-strip\">\n" + channel_strip_svg(channel_strip(b)) + "</figure>\n";
    }
  }
  if (!p.radiation_convention.empty()) bands_html += "<p class=\"practice\">" + html(p.radiation_convention) + "</p>\n";
  bands_html += "</section>\n";

  // The page for the lab.
  std::string lab_html;
  lab_html += "<section id=\"pre-lab\">\n<h2>Before the lab</h2>\n<h3>Standard and class</h3>\n<ul>\n";
  if (s.limits.sets.empty()) lab_html += "<li>No limit lines were given.</li>\n";
  for (const LimitSet& set : s.limits.sets) {
    lab_html += "<li><strong>" + html(set.name) + "</strong> \xE2\x80\x94 " + html(set.source) + " <span class=\"practice\">(" +
           html(set.confidence_text) + ")</span>" + (set.file.empty() ? "" : " <code>" + html(set.file) + "</code>") +
           "</li>\n";
  }
  lab_html += "</ul>\n<h3>Detector plan</h3>\n<ol>\n";
  for (const BandScan& scan : p.scans) {
    const BandParameters band = band_parameters(scan.band);
    lab_html += "<li>Peak pre-scan of CISPR band " + to_string(scan.band) + " (" +
           html(format_quantity(band.start_hz, Dimension::frequency) + " \xE2\x80\x93 " +
                format_quantity(band.stop_hz, Dimension::frequency)) +
           ", " + html(format_quantity(band.bandwidth_6db_hz, Dimension::frequency)) +
           " bandwidth, step at most " + html(format_quantity(band.bandwidth_6db_hz / 2.0, Dimension::frequency)) +
           ") on each supply line in turn.</li>\n";
  }
  lab_html += "<li>Quasi-peak and average readings at the frequencies below (and at any other peak reading within the guard "
         "band of a line), each line in turn, dwelling long enough for the meter to settle "
         "<span class=\"practice\">(common practice: at least 1 s per frequency for quasi-peak)</span>.</li>\n"
         "<li>A peak reading under the average line meets every line (peak \xE2\x89\xA5 quasi-peak \xE2\x89\xA5 average); "
         "such frequencies need no final measurement.</li>\n</ol>\n";
  lab_html += "<h3>Frequencies to re-measure with quasi-peak and average</h3>\n";
  const std::vector<WorstFrequency> remeasure = worst_frequencies(p, 10);
  if (remeasure.empty()) {
    lab_html += "<p>None predicted (no reading was compared with a line).</p>\n";
  } else {
    lab_html += margin_table(p, remeasure);
  }
  lab_html += "<h3>Measurement uncertainty</h3>\n<p>";
  if (const std::optional<double> u = uncertainty_for(p)) {
    lab_html += "CISPR 16-4-2 U<sub>cispr</sub> for this measurement: " + html(fixed(*u, 1)) +
           " dB (expanded, k = 2; from memory, docs/references.md \xC2\xA7" "7). When the lab's own uncertainty is at most "
           "U<sub>cispr</sub>, the product complies when the measured value is at or under the limit; a predicted "
           "margin smaller than U<sub>cispr</sub> can fall either side at the lab.";
  } else {
    lab_html += "No CISPR 16-4-2 value is listed for this measurement.";
  }
  lab_html += "</p>\n<h3>Set-up</h3>\n<p>" + html(p.setup_description) + "</p>\n<ul>\n"
         "<li>Table-top equipment: 0.8 m above the reference ground plane, 0.4 m from a vertical reference plane.</li>\n"
         "<li>Floor-standing equipment: on an insulating support 0.1 m above the reference ground plane.</li>\n"
         "<li>Each LISN bonded to the reference ground plane with a short, wide connection.</li>\n"
         "<li>Excess mains or supply cable folded non-inductively into a bundle 0.3\xE2\x80\x93" "0.4 m long.</li>\n"
         "<li>The lines not being measured terminated in 50 \xCE\xA9 (the LISN's own port termination).</li>\n"
         "</ul>\n<p class=\"practice\">common practice (from memory; CISPR 16-2-1 / CISPR 32 describe the arrangement)</p>\n"
         "</section>\n";

  // Limits of the model.
  std::string model_html;
  model_html += "<section id=\"assumptions\">\n<h2>Limits of the model</h2>\n<ul>\n"
         "<li>The coupling network is linear and time-invariant: parts do not saturate or heat, and the filter does not "
         "change the source (the switch waveform is taken as given).</li>\n"
         "<li>Only the parts listed are modelled: the input capacitor with its ESR and ESL, the filter stages, one "
         "switch-node capacitance to ground for the common-mode path. Layout coupling, heatsink and cable resonances "
         "are not.</li>\n";
  if (s.lisn.measured) {
    model_html += "<li>LISN: the impedance measured in " + html(s.lisn.file) + " for each network (" +
                  html(lisn_model_name(s.lisn.model)) +
                  "), port = terminal; interpolated between the file's points, never extrapolated.</li>\n";
  } else {
    model_html += std::string("<li>LISN: the ") + (s.lisn.circuit == LisnCircuit::ideal ? "ideal" : "practical") +
                  " circuit of " + html(lisn_model_name(s.lisn.model)) +
                  (s.lisn.circuit == LisnCircuit::ideal
                       ? " (the defined impedance, port = terminal; a lab reports levels after its voltage-division correction)"
                       : " (part values from memory)") +
                  ".</li>\n";
  }
  model_html += "<li>The receiver's IF filter is Gaussian with the CISPR 16-1-1 6 dB bandwidth; the standard's selectivity "
         "mask is met only approximately. Detectors are calibrated so a sine reads its RMS value.</li>\n"
         "<li>Broadcast-band fields use the exact near- and far-field expressions of short dipoles and small loops "
         "(Balanis) for the supply cable's common- and differential-mode currents and the hot loop, in the "
         "orientation that couples most; real orientations, the room and nearby wiring change them by many dB either "
         "way. The ambient is man-made noise only (ITU-R P.372).</li>\n"
         "<li>Limit values marked <em>from memory</em> must be checked against the standard before a decision.</li>\n";
  for (const std::string& note : p.notes) model_html += "<li>" + html(note) + "</li>\n";
  model_html += "</ul>\n</section>\n";

  // Safety.
  std::string safety_html;
  safety_html += "<section id=\"safety\" class=\"caution\">\n<h2>Safety</h2>\n<ul>\n"
         "<li>Switch nodes and their ringing can reach hundreds of volts: measure with probes rated for the voltage, "
         "and with an isolated supply where appropriate.</li>\n"
         "<li>A LISN passes a large leakage current to earth: bond it to protective earth before mains is applied.</li>\n"
         "<li>A prediction is not a compliance result: only an accredited test decides. Local codes and licensed "
         "practice take precedence over anything in this report.</li>\n</ul>\n</section>\n";

  // Files.
  std::string files_html;
  files_html += "<section id=\"files\">\n<h2>Files</h2>\n<p>Written beside this page: ";
  std::vector<std::string> names;
  for (const std::string& f : files) names.push_back("<code>" + html(f) + "</code>");
  files_html += join(names, ", ") + ".</p>\n</section>\n";
  out += verdict_html + plots_html + changes_html + margins_html + bands_html + lab_html + safety_html + model_html +
         inputs_html + files_html;
  out += "<footer>spurcast " SPURCAST_VERSION " \xE2\x80\x94 a pre-compliance estimate from a model; not a test "
         "result.</footer>\n</main>\n<script>" +
         std::string(page_script) + "</script>\n</body>\n</html>\n";
  return out;
}

std::vector<OutputFile> report_files(const Prediction& p, const Prediction* before) {
  std::vector<OutputFile> files;
  files.push_back({"spectrum.csv", lisn_spectrum_csv(p)});
  files.push_back({"source_spectrum.csv", source_spectrum_csv(p)});
  if (!p.input_current_a.harmonics.empty()) {
    files.push_back({"source_current_spectrum.csv", source_current_spectrum_csv(p)});
  }
  files.push_back({"scan.csv", scan_csv(p)});
  files.push_back({"margins.csv", margins_csv(p.margins)});
  files.push_back({"bands.csv", bands_csv(p.reception)});
  files.push_back({"channels.csv", channels_csv(p.reception)});
  for (const BandScan& scan : p.scans) {
    files.push_back({readings_plot_file(scan),
                     spectrum_plot_svg(readings_plot(p, scan, before ? before_scan(*before, scan.band) : nullptr))});
  }
  for (const RadiatedScan& scan : p.radiated_scans) {
    files.push_back({"radiated-" + to_string(scan.band) + "-" + radiated_distance_name(scan.distance_m) + ".svg",
                     spectrum_plot_svg(radiated_plot(p, scan))});
  }
  files.push_back({"source.svg", spectrum_plot_svg(source_plot(p))});
  std::vector<std::string> names;
  for (const OutputFile& f : files) names.push_back(f.name);
  names.push_back("report.html");
  names.push_back("summary.json");
  files.push_back({"report.html", report_html(p, names, before)});
  files.push_back({"summary.json", summary_json(p, names)});
  return files;
}

}  // namespace spurcast

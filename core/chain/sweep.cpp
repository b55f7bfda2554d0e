#include "core/chain/sweep.hpp"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <limits>
#include <map>
#include <mutex>
#include <thread>

#include <fmt/format.h>

#include "core/radio/bands.hpp"
#include "core/coupling/conducted.hpp"
#include "core/input/error.hpp"
#include "core/radio/radiated.hpp"
#include "core/receiver/receiver.hpp"
#include "core/chain/parallel.hpp"
#include "core/chain/prediction.hpp"
#include "core/chain/scenario.hpp"
#include "core/radio/reception.hpp"
#include "core/source/source.hpp"

namespace spurcast {

namespace {

// ---------------------------------------------------------------------------------------------
// Keys: dotted paths into the parsed scenario.

std::string trim(std::string_view text) {
  const auto first = text.find_first_not_of(" \t");
  if (first == std::string_view::npos) return "";
  const auto last = text.find_last_not_of(" \t");
  return std::string(text.substr(first, last - first + 1));
}

std::vector<std::string> split(std::string_view text, char separator) {
  std::vector<std::string> parts;
  std::size_t start = 0;
  while (true) {
    const std::size_t end = text.find(separator, start);
    parts.emplace_back(text.substr(start, end == std::string_view::npos ? std::string_view::npos : end - start));
    if (end == std::string_view::npos) break;
    start = end + 1;
  }
  return parts;
}

std::vector<std::string> key_parts(std::string_view key) {
  std::vector<std::string> parts = split(key, '.');
  const bool bad = parts.size() < 2 || std::any_of(parts.begin(), parts.end(), [](const std::string& p) {
                     return p.empty() || p.find_first_of(" \t=") != std::string::npos;
                   });
  if (bad) {
    throw Error("expected a dotted scenario key such as \"switching.frequency\", found \"" + std::string(key) + "\"");
  }
  return parts;
}

std::string joined(const std::vector<std::string>& parts, std::size_t count) {
  std::string out;
  for (std::size_t i = 0; i < count && i < parts.size(); ++i) out += (i ? "." : "") + parts[i];
  return out;
}

/// The 1-based index of an array element in a key ("filter.2.inductance").
std::size_t array_index(const std::vector<std::string>& parts, std::size_t i, std::size_t size) {
  std::size_t index = 0;
  const std::string& text = parts[i];
  const auto [end, ec] = std::from_chars(text.data(), text.data() + text.size(), index);
  if (ec != std::errc() || end != text.data() + text.size() || index == 0) {
    throw Error("expected a [[" + joined(parts, i) + "]] number from 1 after '" + joined(parts, i) + ".', found \"" +
                text + "\"");
  }
  if (index > size) {
    throw Error("no [[" + joined(parts, i) + "]] " + text + " in the scenario (it has " + std::to_string(size) + ")");
  }
  return index - 1;
}

/// The node at `parts` (nullptr when a table on the way or the key itself is absent); throws on a
/// path through a non-table or a missing array element.
const toml::node* find_key(const toml::table& table, const std::vector<std::string>& parts) {
  const toml::table* current = &table;
  for (std::size_t i = 0; i + 1 < parts.size(); ++i) {
    const toml::node* child = current->get(parts[i]);
    if (!child) return nullptr;
    if (const toml::array* array = child->as_array()) {
      if (i + 2 >= parts.size()) {
        throw Error("expected a key after '" + joined(parts, i + 2) + "', e.g. \"" + joined(parts, i + 1) +
                    ".1.inductance\"");
      }
      const std::size_t index = array_index(parts, i + 1, array->size());
      const toml::table* element = array->get(index)->as_table();
      if (!element) throw Error("'" + joined(parts, i + 2) + "' is not a table");
      current = element;
      ++i;
      continue;
    }
    current = child->as_table();
    if (!current) throw Error("'" + joined(parts, i + 1) + "' is not a table, so it has no key '" + parts[i + 1] + "'");
  }
  const toml::node* leaf = current->get(parts.back());
  if (leaf && (leaf->is_table() || leaf->is_array())) {
    throw Error("'" + joined(parts, parts.size()) + "' is a " + (leaf->is_table() ? "table" : "list") +
                ", not a number");
  }
  return leaf;
}

/// The table that holds the key's leaf, created where missing.
toml::table& parent_for_write(toml::table& table, const std::vector<std::string>& parts) {
  toml::table* current = &table;
  for (std::size_t i = 0; i + 1 < parts.size(); ++i) {
    toml::node* child = current->get(parts[i]);
    if (!child) {
      auto [it, inserted] = current->insert(parts[i], toml::table{});
      (void)inserted;
      current = it->second.as_table();
      continue;
    }
    if (toml::array* array = child->as_array()) {
      if (i + 2 >= parts.size()) throw Error("expected a key after '" + joined(parts, i + 2) + "'");
      const std::size_t index = array_index(parts, i + 1, array->size());
      toml::table* element = array->get(index)->as_table();
      if (!element) throw Error("'" + joined(parts, i + 2) + "' is not a table");
      current = element;
      ++i;
      continue;
    }
    current = child->as_table();
    if (!current) throw Error("'" + joined(parts, i + 1) + "' is not a table, so it has no key '" + parts[i + 1] + "'");
  }
  return *current;
}

/// Dimensions tried when a unit decides (fraction last: "%" only; number is the plain case).
constexpr Dimension unit_dimensions[] = {
    Dimension::frequency,   Dimension::time,       Dimension::voltage,     Dimension::current,
    Dimension::capacitance, Dimension::inductance, Dimension::resistance,  Dimension::length,
    Dimension::level_dbuv,  Dimension::level_dbua, Dimension::level_dbuvm, Dimension::decibel,
    Dimension::fraction,
};

bool parses_as(std::string_view text, Dimension dimension) {
  try {
    (void)parse_quantity(text, dimension);
    return true;
  } catch (const Error&) {
    return false;
  }
}

/// The dimension a quantity text's unit names; nullopt for a plain number or no known unit.
std::optional<Dimension> dimension_of_text(std::string_view text) {
  if (parses_as(text, Dimension::number)) return std::nullopt;
  for (const Dimension d : unit_dimensions) {
    if (parses_as(text, d)) return d;
  }
  return std::nullopt;
}

std::string format_value(double value, Dimension dimension) {
  if (dimension == Dimension::number) return fmt::format("{:.6g}", value);
  if (dimension == Dimension::fraction) return fmt::format("{:.6g} %", 100.0 * value);
  return format_quantity(value, dimension, 6);
}

// ---------------------------------------------------------------------------------------------
// The per-sweep context shared (read-only) by the workers.

struct Context {
  const toml::table* table = nullptr;
  std::string file;
  std::string directory;
  const SweepOptions* options = nullptr;
  Scenario base;
  bool reread_limits = false;   ///< a limits. key varies
  bool shared_model = true;     ///< no coupling./filter./lisn. key varies
  bool shared_bands = true;     ///< no broadcast. key varies
  /// The cable fields per ampere over the bands, when the radiation set-up is the same at every
  /// point (no broadcast., supply. or board. key varies): the fields are interpolated from it.
  std::optional<CableFieldTable> cable_table;
  std::optional<ConductedModel> model;
  std::vector<Band> bands;
  std::vector<std::vector<double>> channel_centres;  ///< per band of `bands`
  std::vector<WindowCriterion> criteria;
  std::vector<std::size_t> criterion_band;  ///< index into bands for band_clear
  // Columns.
  std::vector<Detector> detectors;
  std::vector<std::string> limit_lines;
  std::map<std::string, std::size_t> limit_line_index;
};

struct LinesOutcome {
  MarginReport margins;
  std::vector<BandReception> reception;
  bool drift_limits_ok = true;
  std::vector<bool> drift_band_ok;  ///< per band, analytic drift check (true when tolerance is 0)
};

/// The smallest value of `line` over [lo, hi] where it is defined (log-linear segments are
/// monotone, so the extremes are at the ends of each covered piece); nullopt when not covered.
std::optional<double> min_limit_over(const LimitLine& line, double lo, double hi) {
  std::optional<double> least;
  for (const LimitSegment& s : line.segments) {
    const double a = std::max(lo, s.from_hz);
    const double b = std::min(hi, s.to_hz);
    if (a > b) continue;
    const double v = std::min(s.level_at(a), s.level_at(b));
    if (!least || v < *least) least = v;
  }
  return least;
}

/// Harmonic numbers k (ascending) with k·f0 in any of `ranges` [lo, hi].
std::vector<std::size_t> harmonics_in(std::vector<std::pair<double, double>> ranges, double f0) {
  std::sort(ranges.begin(), ranges.end());
  std::vector<std::size_t> ks;
  std::size_t next = 1;
  for (const auto& [lo, hi] : ranges) {
    const double k_lo = std::max(1.0, std::ceil(lo / f0 - 1e-9));
    const double k_hi = std::floor(hi / f0 + 1e-9);
    for (double k = std::max(k_lo, static_cast<double>(next)); k <= k_hi; k += 1.0) {
      ks.push_back(static_cast<std::size_t>(k));
    }
    if (k_hi + 1.0 > static_cast<double>(next)) next = static_cast<std::size_t>(std::max(k_hi + 1.0, 1.0));
  }
  return ks;
}

/// The exact line-spectrum path for a described, undithered source (see sweep.hpp).
LinesOutcome evaluate_lines(const Scenario& scenario, const ConductedModel& model, const std::vector<Band>& bands,
                            const Context& ctx) {
  const SwitchingSpec& spec = *scenario.switching;
  const double f0 = spec.frequency_hz;
  const double tol = ctx.options->tolerance_fraction;

  // Which harmonics matter: the receiver bands with the IF skirt (2·B6) at their edges and the
  // drift range, and every broadcast band's channel passbands with the drift range.
  std::vector<std::pair<double, double>> ranges;
  std::vector<BandParameters> receiver;
  for (const CisprBand b : scenario.receiver.bands) {
    const BandParameters p = band_parameters(b);
    receiver.push_back(p);
    ranges.emplace_back(std::min(p.start_hz - 2.0 * p.bandwidth_6db_hz, p.start_hz / (1.0 + tol)),
                        std::max(p.stop_hz + 2.0 * p.bandwidth_6db_hz, p.stop_hz / (1.0 - tol)));
  }
  for (const Band& band : bands) {
    ranges.emplace_back((band.low_hz - band.bandwidth_hz) / (1.0 + tol), (band.high_hz + band.bandwidth_hz) / (1.0 - tol));
  }
  const std::vector<std::size_t> ks = harmonics_in(ranges, f0);
  LinesOutcome out;
  out.drift_band_ok.assign(bands.size(), true);
  if (ks.empty()) {
    out.margins = compare_with_limits({}, scenario.limits.sets, {.guard_db = scenario.limits.guard_db});
    out.reception = estimate_reception(bands, std::vector<SpectralLine>{}, scenario.broadcast);
    return out;
  }
  const double top_hz = static_cast<double>(ks.back()) * f0 * (1.0 + 1e-9);
  const LineSpectrum v_sw = switch_node_spectrum(spec, top_hz);
  const LineSpectrum i_in = input_current_spectrum(spec, top_hz);
  std::vector<double> frequency_hz(ks.size());
  for (std::size_t j = 0; j < ks.size(); ++j) frequency_hz[j] = static_cast<double>(ks[j]) * f0;
  const TransferFunctions h = transfer_at(model, frequency_hz);
  const bool two_lines = model.line_count() == 2;

  // Conducted levels (the higher of the two ports) and the CM/DM currents per harmonic,
  // superposition of the two sources as in conduct().
  std::vector<double> port_dbuv(ks.size()), cm_a(ks.size()), dm_a(ks.size());
  for (std::size_t j = 0; j < ks.size(); ++j) {
    const std::size_t k = ks[j] - 1;
    const std::complex<double> v = k < v_sw.harmonics.size() ? v_sw.harmonics[k] : 0.0;
    const std::complex<double> i = k < i_in.harmonics.size() ? i_in.harmonics[k] : 0.0;
    const std::complex<double> v1 = h.port1_per_input_current_ohm[j] * i + h.port1_per_switch_node[j] * v;
    const std::complex<double> v2 = h.port2_per_input_current_ohm[j] * i + h.port2_per_switch_node[j] * v;
    const std::complex<double> i1 = h.line1_current_per_input_current[j] * i + h.line1_current_per_switch_node_s[j] * v;
    const std::complex<double> i2 = h.line2_current_per_input_current[j] * i + h.line2_current_per_switch_node_s[j] * v;
    port_dbuv[j] = volts_to_dbuv(std::max(std::abs(v1), two_lines ? std::abs(v2) : 0.0));
    cm_a[j] = std::abs(0.5 * (i1 + i2));
    dm_a[j] = std::abs(0.5 * (i1 - i2));
  }

  // Receiver readings: an isolated line reads its RMS on every detector at its own frequency; a
  // line just outside a band is read at the band edge through the Gaussian IF skirt.
  std::vector<LevelReading> readings;
  readings.reserve(ks.size() * scenario.receiver.detectors.size());
  for (const BandParameters& p : receiver) {
    for (std::size_t j = 0; j < ks.size(); ++j) {
      const double f = frequency_hz[j];
      double tuned = f;
      double level = port_dbuv[j];
      if (f < p.start_hz || f > p.stop_hz) {
        tuned = f < p.start_hz ? p.start_hz : p.stop_hz;
        if (std::abs(tuned - f) >= 2.0 * p.bandwidth_6db_hz) continue;
        level += 20.0 * std::log10(if_gain(tuned - f, p.bandwidth_6db_hz));
      }
      if (level <= level_floor_db) continue;
      for (const Detector d : scenario.receiver.detectors) readings.push_back({tuned, d, level});
    }
  }
  out.margins = compare_with_limits(readings, scenario.limits.sets, {.guard_db = scenario.limits.guard_db});

  // Drift of the lines against the limits: each reading against the lowest value of its line over
  // f·(1 ± tol); lines that drift into a band from outside are read at their drifted frequency.
  if (tol > 0.0) {
    for (const BandParameters& p : receiver) {
      for (std::size_t j = 0; j < ks.size() && out.drift_limits_ok; ++j) {
        const double lo = std::max(frequency_hz[j] * (1.0 - tol), p.start_hz);
        const double hi = std::min(frequency_hz[j] * (1.0 + tol), p.stop_hz);
        if (lo > hi) continue;
        for (const Detector d : scenario.receiver.detectors) {
          for (const LimitSet& set : scenario.limits.sets) {
            const LimitLine* line = set.line_for(d);
            if (!line) continue;
            const std::optional<double> least = min_limit_over(*line, lo, hi);
            if (least && *least - port_dbuv[j] < scenario.limits.guard_db) out.drift_limits_ok = false;
          }
        }
      }
    }
  }

  // Broadcast bands: fields of the radiators, then the reception estimate (as predict() does).
  std::vector<std::size_t> band_ks;
  RadiatorCurrents currents;
  for (std::size_t j = 0; j < ks.size(); ++j) {
    const double f = frequency_hz[j];
    const bool in_some_band = std::any_of(bands.begin(), bands.end(), [&](const Band& b) {
      return f >= (b.low_hz - b.bandwidth_hz) / (1.0 + tol) && f <= (b.high_hz + b.bandwidth_hz) / (1.0 - tol);
    });
    if (!in_some_band) continue;
    band_ks.push_back(ks[j]);
    currents.frequency_hz.push_back(f);
    currents.cable_cm_per_conductor_a.push_back(cm_a[j]);
    currents.cable_dm_a.push_back(dm_a[j]);
    const std::size_t k = ks[j] - 1;
    currents.hot_loop_a.push_back(k < i_in.harmonics.size() ? std::abs(i_in.harmonics[k]) : 0.0);
  }
  if (scenario.supply.kind == SupplyKind::battery) currents = radiator_currents(scenario, v_sw, i_in, band_ks, nullptr);
  const ReceiverLines heard = receiver_lines(
      ctx.cable_table ? radiated_field(ctx.cable_table->setup(), currents, *ctx.cable_table)
                      : radiated_field(radiation_setup(scenario.broadcast, scenario.supply, scenario.board), currents));
  out.reception = estimate_reception(bands, heard, scenario.broadcast);

  // Drift of the lines across the channels, analytically: a channel hears each line whose range
  // k·f0·(1 ± tol) comes within its reach, through its shaped response at the nearest point of that
  // range (full level when the range covers the centre; power sum, the worst case); the band stays
  // clear when each such channel is judged clear, with the same whistle rule as predict().
  if (tol > 0.0) {
    for (std::size_t b = 0; b < bands.size(); ++b) {
      const Band& band = bands[b];
      const bool magnetic = antenna_for_band(scenario.broadcast.antenna, band.high_hz) == AntennaKind::ferrite;
      const std::vector<SpectralLine>& lines = magnetic ? heard.h_lines : heard.e_lines;
      std::vector<double> own_centres;
      if (b >= ctx.channel_centres.size() || !ctx.shared_bands) own_centres = band.channel_centres_hz();
      const std::vector<double>& centres = own_centres.empty() ? ctx.channel_centres[b] : own_centres;
      const double reach = channel_reach_hz(band.bandwidth_hz);
      std::vector<double> power(centres.size(), 0.0), strongest(centres.size(), 0.0);
      std::vector<bool> heard_any(centres.size(), false);
      for (const SpectralLine& line : lines) {
        const double lo = line.frequency_hz * (1.0 - tol);
        const double hi = line.frequency_hz * (1.0 + tol);
        const auto first = static_cast<std::size_t>(std::lower_bound(centres.begin(), centres.end(), lo - reach) - centres.begin());
        const auto last = static_cast<std::size_t>(std::upper_bound(centres.begin(), centres.end(), hi + reach) - centres.begin());
        for (std::size_t c = first; c < last; ++c) {
          const double offset = centres[c] < lo ? lo - centres[c] : centres[c] > hi ? centres[c] - hi : 0.0;
          const double p = std::pow(10.0, (line.level_db + channel_response_db(offset, band.bandwidth_hz)) / 10.0);
          power[c] += p;
          strongest[c] = std::max(strongest[c], p);
          heard_any[c] = true;
        }
      }
      for (std::size_t c = 0; c < centres.size() && out.drift_band_ok[b]; ++c) {
        if (!heard_any[c]) continue;
        const double level_db = power[c] > 0.0 ? 10.0 * std::log10(power[c]) : level_floor_db;
        const double strongest_db = strongest[c] > 0.0 ? 10.0 * std::log10(strongest[c]) : level_floor_db;
        if (judge_channel(band, centres[c], level_db, scenario.broadcast.environment, is_tone(strongest_db, level_db))
                .verdict != ReceptionVerdict::clear) {
          out.drift_band_ok[b] = false;
        }
      }
    }
  }
  return out;
}

/// The receiver bands' 6 dB bandwidths decide whether the lines are isolated in the IF filter.
bool lines_are_isolated(const Scenario& scenario) {
  // A boost PFC stage is read over the mains cycle by the receiver scan (prediction.cpp).
  if (!scenario.switching || scenario.switching->dither || scenario.converter.topology == Topology::boost_pfc) {
    return false;
  }
  for (const CisprBand b : scenario.receiver.bands) {
    if (!(scenario.switching->frequency_hz > 2.0 * band_parameters(b).bandwidth_6db_hz)) return false;
  }
  return true;
}

void fill_margins(SweepPoint& point, const MarginReport& report, const Context& ctx) {
  point.detectors.resize(ctx.detectors.size());
  for (std::size_t d = 0; d < ctx.detectors.size(); ++d) point.detectors[d].detector = ctx.detectors[d];
  for (const DetectorMargin& worst : report.worst_per_detector) {
    const auto it = std::find(ctx.detectors.begin(), ctx.detectors.end(), worst.detector);
    if (it == ctx.detectors.end() || worst.comparisons == 0) continue;
    DetectorMarginPoint& cell = point.detectors[static_cast<std::size_t>(it - ctx.detectors.begin())];
    cell.margin_db = worst.worst.margin_db;
    cell.frequency_hz = worst.worst.frequency_hz;
  }
  point.limit_lines.assign(ctx.limit_lines.size(), LineMarginPoint{});
  for (const MarginRow& row : report.rows) {
    const auto it = ctx.limit_line_index.find(row.limit_label);
    if (it == ctx.limit_line_index.end()) continue;
    LineMarginPoint& cell = point.limit_lines[it->second];
    if (!cell.margin_db || row.margin_db < *cell.margin_db) {
      cell.margin_db = row.margin_db;
      cell.frequency_hz = row.frequency_hz;
    }
  }
  if (report.worst) point.worst_margin_db = report.worst->margin_db;
  point.limits_verdict = report.verdict;
}

void fill_bands(SweepPoint& point, const std::vector<BandReception>& reception, const Context& ctx) {
  point.bands.assign(ctx.bands.size(), BandPoint{});
  for (std::size_t b = 0; b < reception.size() && b < point.bands.size(); ++b) {
    const BandReception& r = reception[b];
    BandPoint& cell = point.bands[b];
    cell.channels_hit = r.channels.size();
    cell.verdict = r.verdict;
    if (r.worst_channel) {
      cell.worst_channel_hz = r.channels[*r.worst_channel].centre_hz;
      cell.worst_level_dbuvm = r.channels[*r.worst_channel].level_dbuvm;
    }
    for (const ChannelReception& c : r.channels) {
      const double headroom = c.clear_below_dbuvm - c.level_dbuvm;
      if (!cell.clear_headroom_db || headroom < *cell.clear_headroom_db) cell.clear_headroom_db = headroom;
    }
  }
}

/// The fundamental's frequency range: dither deviation and drift tolerance.
bool fundamental_outside(double f0, const Scenario& scenario, CisprBand band, double tol) {
  if (!(f0 > 0.0)) return false;
  const double deviation = scenario.switching && scenario.switching->dither ? scenario.switching->dither->deviation_fraction : 0.0;
  const double lo = f0 * (1.0 - deviation) * (1.0 - tol);
  const double hi = f0 * (1.0 + deviation) * (1.0 + tol);
  const BandParameters p = band_parameters(band);
  return hi < p.start_hz || lo > p.stop_hz;
}

std::string point_label(const std::vector<SweepAxis>& axes, const std::vector<double>& values) {
  std::string label;
  for (std::size_t a = 0; a < axes.size(); ++a) {
    label += (a ? ", " : "") + axes[a].key + " = " + format_value(values[a], axes[a].dimension);
  }
  return label;
}

SweepPoint evaluate_point(const Context& ctx, const std::vector<double>& values) {
  SweepPoint point;
  point.values = values;
  const SweepOptions& options = *ctx.options;
  Scenario scenario;
  try {
    toml::table copy = *ctx.table;
    if (!ctx.reread_limits) copy.erase("limits");  // the limit files are read once, not per point
    for (std::size_t a = 0; a < options.axes.size(); ++a) {
      set_scenario_key(copy, options.axes[a].key, values[a], options.axes[a].dimension);
    }
    scenario = scenario_from_table(copy, ctx.file, ctx.directory, ctx.base.data);
    if (!ctx.reread_limits) scenario.limits = ctx.base.limits;
  } catch (const Error& e) {
    point.error = e.what();
    return point;
  }
  const double tol = options.tolerance_fraction;
  std::vector<bool> band_ok(ctx.bands.size(), true);
  bool drift_limits_ok = true;
  try {
    std::optional<std::vector<Band>> own_bands;
    if (!ctx.shared_bands) own_bands = bands_for(scenario.broadcast, scenario.data);
    const std::vector<Band>& bands = own_bands ? *own_bands : ctx.bands;
    if (options.exact_lines && lines_are_isolated(scenario)) {
      point.method = "lines";
      point.switching_frequency_hz = scenario.switching->frequency_hz;
      std::optional<ConductedModel> own_model;
      if (!ctx.shared_model) own_model.emplace(scenario.coupling, scenario.filters, scenario.lisn, scenario.converter);
      const LinesOutcome outcome = evaluate_lines(scenario, own_model ? *own_model : *ctx.model, bands, ctx);
      fill_margins(point, outcome.margins, ctx);
      fill_bands(point, outcome.reception, ctx);
      for (std::size_t b = 0; b < band_ok.size() && b < outcome.drift_band_ok.size(); ++b) {
        band_ok[b] = outcome.drift_band_ok[b];
      }
      drift_limits_ok = outcome.drift_limits_ok;
    } else {
      point.method = "scan";
      PredictionOptions prediction = options.prediction;
      prediction.skip_scans = false;
      prediction.skip_report_details = true;
      const Prediction p = predict(scenario, prediction);
      point.switching_frequency_hz = p.switch_node_v.fundamental_hz;
      fill_margins(point, p.margins, ctx);
      fill_bands(point, p.reception, ctx);
    }
  } catch (const Error& e) {
    point.error = e.what();
    point.method.clear();
    return point;
  }
  // The point alone against each criterion, at its nominal value and with the analytic drift
  // check (the `all` criterion combines the others).
  point.point_meets.assign(ctx.criteria.size(), false);
  point.drift_meets.assign(ctx.criteria.size(), false);
  for (std::size_t c = 0; c < ctx.criteria.size(); ++c) {
    const WindowCriterion& criterion = ctx.criteria[c];
    switch (criterion.kind) {
      case WindowCriterion::Kind::band_clear: {
        const std::size_t b = ctx.criterion_band[c];
        point.point_meets[c] = point.bands[b].verdict == ReceptionVerdict::clear;
        point.drift_meets[c] = point.point_meets[c] && band_ok[b];
        break;
      }
      case WindowCriterion::Kind::fundamental_outside: {
        const CisprBand band = band_from_string(criterion.band);
        point.point_meets[c] = fundamental_outside(point.switching_frequency_hz, scenario, band, 0.0);
        point.drift_meets[c] = fundamental_outside(point.switching_frequency_hz, scenario, band, tol);
        break;
      }
      case WindowCriterion::Kind::limits_met:
        point.point_meets[c] = point.limits_verdict == Verdict::pass;
        point.drift_meets[c] = point.point_meets[c] && drift_limits_ok;
        break;
      case WindowCriterion::Kind::all: {
        bool nominal = true, drift = true;
        for (std::size_t o = 0; o < c; ++o) {
          nominal = nominal && point.point_meets[o];
          drift = drift && point.drift_meets[o];
        }
        point.point_meets[c] = nominal;
        point.drift_meets[c] = drift;
        break;
      }
    }
  }
  return point;
}

std::size_t band_index(const SweepResult& result, const std::string& name) {
  return static_cast<std::size_t>(std::find(result.bands.begin(), result.bands.end(), name) - result.bands.begin());
}

/// " (harmonic k)" of the line nearest `frequency_hz` when the point has a switching frequency.
std::string harmonic_text(double frequency_hz, double f0_hz) {
  if (!(f0_hz > 0.0)) return "";
  return fmt::format(" (harmonic {})", std::max(1L, std::lround(frequency_hz / f0_hz)));
}

/// Why `p` fails criterion `c` at its own value (nominal, then its drift), or "" when it meets it.
std::string criterion_failure(const SweepResult& result, const SweepPoint& p, std::size_t c) {
  if (p.error) return "the scenario refuses this value";
  const WindowCriterion& criterion = result.criteria[c];
  const bool nominal = c < p.point_meets.size() && p.point_meets[c];
  const bool drift = c < p.drift_meets.size() && p.drift_meets[c];
  const std::string drift_text = fmt::format("within +/-{:g} %", 100.0 * result.tolerance_fraction);
  switch (criterion.kind) {
    case WindowCriterion::Kind::band_clear: {
      const std::size_t b = band_index(result, criterion.band);
      if (b >= p.bands.size()) return "";
      const BandPoint& band = p.bands[b];
      if (!nominal && band.worst_channel_hz && band.worst_level_dbuvm) {
        return fmt::format("{} channel {} {} at {:.1f} dBµV/m{}", criterion.band,
                           format_quantity(*band.worst_channel_hz, Dimension::frequency, 4),
                           reception_verdict_name(band.verdict), *band.worst_level_dbuvm,
                           harmonic_text(*band.worst_channel_hz, p.switching_frequency_hz));
      }
      if (!nominal) return criterion.band + " " + reception_verdict_name(band.verdict);
      return drift ? "" : "a harmonic drifting " + drift_text + " reaches a " + criterion.band + " channel";
    }
    case WindowCriterion::Kind::fundamental_outside:
      if (nominal && drift) return "";
      return fmt::format("fundamental {} inside band {}{}", format_quantity(p.switching_frequency_hz, Dimension::frequency, 4),
                         criterion.band, nominal ? " " + drift_text : "");
    case WindowCriterion::Kind::limits_met: {
      if (nominal && drift) return "";
      if (!nominal && p.worst_margin_db) {
        const DetectorMarginPoint* worst = nullptr;
        for (const DetectorMarginPoint& d : p.detectors) {
          if (d.margin_db && (!worst || *d.margin_db < *worst->margin_db)) worst = &d;
        }
        if (worst) {
          return fmt::format("{} margin {:.1f} dB at {}{}, under the {:g} dB guard", to_string(worst->detector),
                             *worst->margin_db, format_quantity(worst->frequency_hz, Dimension::frequency, 4),
                             harmonic_text(worst->frequency_hz, p.switching_frequency_hz), result.guard_db);
        }
      }
      return nominal ? "a harmonic drifting " + drift_text + " comes within the guard of a limit line"
                     : "limits not met (" + to_string(p.limits_verdict) + ")";
    }
    case WindowCriterion::Kind::all:
      for (std::size_t o = 0; o < c; ++o) {
        const std::string why = criterion_failure(result, p, o);
        if (!why.empty()) return why;
      }
      return "";
  }
  return "";
}

/// A point's headroom for criterion c [dB] (SweepRecommendation), with what sets it.
std::optional<std::pair<double, std::string>> point_headroom(const SweepResult& result, const SweepPoint& p,
                                                             std::size_t c) {
  std::optional<std::pair<double, std::string>> least;
  const auto consider = [&](double value, const std::string& what) {
    if (!least || value < least->first) least = std::make_pair(value, what);
  };
  const auto one = [&](const WindowCriterion& criterion) {
    if (criterion.kind == WindowCriterion::Kind::limits_met && p.worst_margin_db) {
      consider(*p.worst_margin_db - result.guard_db, "limits less the guard band");
    } else if (criterion.kind == WindowCriterion::Kind::band_clear) {
      const std::size_t b = band_index(result, criterion.band);
      if (b < p.bands.size()) {
        // No channel hears a line: unbounded headroom (the band is as quiet as it gets).
        consider(p.bands[b].clear_headroom_db ? *p.bands[b].clear_headroom_db : std::numeric_limits<double>::infinity(),
                 p.bands[b].clear_headroom_db ? criterion.band + " clear threshold"
                                              : "no " + criterion.band + " channel hears a line");
      }
    }
  };
  if (result.criteria[c].kind == WindowCriterion::Kind::all) {
    for (std::size_t o = 0; o < c; ++o) one(result.criteria[o]);
  } else {
    one(result.criteria[c]);
  }
  return least;
}

/// SweepRecommendation: over the windows of the last criterion.
void recommend(SweepResult& result) {
  if (result.criteria.empty()) return;
  const std::size_t last = result.criteria.size() - 1;
  const double tol = result.tolerance_fraction;
  struct Candidate {
    std::size_t point = 0, window = 0;
    std::optional<std::pair<double, std::string>> headroom;
    double distance_to_middle = 0.0;  ///< in points
  };
  std::optional<Candidate> best;
  for (std::size_t wi = 0; wi < result.windows.size(); ++wi) {
    const RobustWindow& w = result.windows[wi];
    if (w.criterion != last) continue;
    // The window's group: the points sharing its values of axes 2.., by first-axis value.
    std::vector<std::size_t> group;
    for (std::size_t i = 0; i < result.points.size(); ++i) {
      const std::vector<double>& v = result.points[i].values;
      if (std::equal(v.begin() + 1, v.end(), w.fixed_values.begin(), w.fixed_values.end())) group.push_back(i);
    }
    std::stable_sort(group.begin(), group.end(),
                     [&](std::size_t a, std::size_t b) { return result.points[a].values[0] < result.points[b].values[0]; });
    std::vector<std::size_t> inside;
    for (const std::size_t i : group) {
      const double v = result.points[i].values[0];
      if (v >= w.from_value && v <= w.to_value) inside.push_back(i);
    }
    for (std::size_t n = 0; n < inside.size(); ++n) {
      const double v = result.points[inside[n]].values[0];
      const double lo = std::min(v * (1.0 - tol), v * (1.0 + tol));
      const double hi = std::max(v * (1.0 - tol), v * (1.0 + tol));
      Candidate candidate{inside[n], wi, std::nullopt,
                          std::abs(static_cast<double>(n) - 0.5 * static_cast<double>(inside.size() - 1))};
      for (const std::size_t j : group) {
        const double u = result.points[j].values[0];
        if (u < lo || u > hi) continue;
        const auto h = point_headroom(result, result.points[j], last);
        if (h && (!candidate.headroom || h->first < candidate.headroom->first)) candidate.headroom = h;
      }
      // Largest headroom first; on a tie (or with no level in the criterion) the wider window,
      // then the point nearer the middle of its window.
      bool better = !best;
      if (best) {
        const bool both_levelled = candidate.headroom && best->headroom;
        const bool tie = both_levelled ? candidate.headroom->first == best->headroom->first ||
                                             std::abs(candidate.headroom->first - best->headroom->first) <= 1e-9
                                       : !candidate.headroom && !best->headroom;
        if (!tie) {
          better = candidate.headroom && (!best->headroom || candidate.headroom->first > best->headroom->first);
        } else if (w.point_count != result.windows[best->window].point_count) {
          better = w.point_count > result.windows[best->window].point_count;
        } else {
          better = candidate.distance_to_middle < best->distance_to_middle - 1e-9;
        }
      }
      if (better) best = candidate;
    }
  }
  if (!best) return;
  SweepRecommendation r;
  r.point = best->point;
  r.window = best->window;
  if (best->headroom) {
    if (std::isfinite(best->headroom->first)) r.headroom_db = best->headroom->first;
    r.headroom_to = best->headroom->second;
  }
  result.recommended = r;
}

/// Robustness on the grid and the windows, per group of points sharing the values of axes 2..
void find_windows(SweepResult& result) {
  const std::size_t n0 = result.axes.front().values.size();
  const std::size_t groups = n0 == 0 ? 0 : result.points.size() / n0;
  const double tol = result.tolerance_fraction;
  for (SweepPoint& p : result.points) p.robust.assign(result.criteria.size(), false);
  for (std::size_t g = 0; g < groups; ++g) {
    // Points of the group in increasing first-axis value.
    std::vector<std::size_t> order(n0);
    for (std::size_t i = 0; i < n0; ++i) order[i] = g * n0 + i;
    std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
      return result.points[a].values[0] < result.points[b].values[0];
    });
    std::vector<double> sorted_values(n0);
    for (std::size_t i = 0; i < n0; ++i) sorted_values[i] = result.points[order[i]].values[0];
    for (std::size_t c = 0; c < result.criteria.size(); ++c) {
      // failures[i] = number of failing points among the first i (prefix count).
      // The neighbours must meet the criterion at their nominal values, the point itself with
      // its drift checked analytically.
      std::vector<std::size_t> failures(n0 + 1, 0);
      for (std::size_t i = 0; i < n0; ++i) {
        const SweepPoint& p = result.points[order[i]];
        const bool ok = !p.error && c < p.point_meets.size() && p.point_meets[c];
        failures[i + 1] = failures[i] + (ok ? 0 : 1);
      }
      for (std::size_t i = 0; i < n0; ++i) {
        const double v = sorted_values[i];
        const double lo = std::min(v * (1.0 - tol), v * (1.0 + tol));
        const double hi = std::max(v * (1.0 - tol), v * (1.0 + tol));
        const auto first = static_cast<std::size_t>(
            std::lower_bound(sorted_values.begin(), sorted_values.end(), lo) - sorted_values.begin());
        const auto last = static_cast<std::size_t>(
            std::upper_bound(sorted_values.begin(), sorted_values.end(), hi) - sorted_values.begin());
        const std::size_t a = std::min(first, i);
        const std::size_t b = std::max(last, i + 1);
        const SweepPoint& p = result.points[order[i]];
        const bool itself = !p.error && c < p.drift_meets.size() && p.drift_meets[c];
        result.points[order[i]].robust[c] = itself && failures[b] - failures[a] == 0;
      }
      // Maximal runs of robust points.
      std::size_t i = 0;
      while (i < n0) {
        if (!result.points[order[i]].robust[c]) {
          ++i;
          continue;
        }
        std::size_t j = i;
        while (j + 1 < n0 && result.points[order[j + 1]].robust[c]) ++j;
        RobustWindow w;
        w.criterion = c;
        const SweepPoint& first_point = result.points[order[i]];
        w.fixed_values.assign(first_point.values.begin() + 1, first_point.values.end());
        w.from_value = sorted_values[i];
        w.to_value = sorted_values[j];
        w.first_point = order[i];
        w.last_point = order[j];
        w.point_count = j - i + 1;
        w.open_low = i == 0;
        w.open_high = j + 1 == n0;
        // The edge's reason: the first point outside that fails on its own, else the nearest point
        // within the tolerance beyond it that does.
        const auto edge_reason = [&](std::size_t outside, bool downward) {
          const double v = sorted_values[outside];
          for (std::size_t k = outside;; downward ? --k : ++k) {
            const double distance = std::abs(sorted_values[k] - v);
            if (k != outside && distance > std::abs(v) * 2.0 * tol) break;
            const std::string why = criterion_failure(result, result.points[order[k]], c);
            if (!why.empty()) {
              return k == outside ? fmt::format("at {}: {}", format_value(v, result.axes.front().dimension), why)
                                  : fmt::format("at {}: within +/-{:g} % of {} where {}",
                                                format_value(v, result.axes.front().dimension), 100.0 * tol,
                                                format_value(sorted_values[k], result.axes.front().dimension), why);
            }
            if (downward ? k == 0 : k + 1 == n0) break;
          }
          return fmt::format("at {}: not robust", format_value(v, result.axes.front().dimension));
        };
        if (!w.open_low) w.low_edge = edge_reason(i - 1, true);
        if (!w.open_high) w.high_edge = edge_reason(j + 1, false);
        result.windows.push_back(w);
        i = j + 1;
      }
    }
  }
  std::stable_sort(result.windows.begin(), result.windows.end(),
                   [](const RobustWindow& a, const RobustWindow& b) { return a.criterion < b.criterion; });
  recommend(result);
}

}  // namespace

// ---------------------------------------------------------------------------------------------

VarySpec parse_vary(std::string_view text) {
  const std::string usage = "expected KEY=FROM:TO[:N] (e.g. \"switching.frequency=100kHz:3MHz:1000\"), found \"" +
                            std::string(text) + "\"";
  const auto equals = text.find('=');
  if (equals == std::string_view::npos) throw Error(usage);
  VarySpec vary;
  vary.key = trim(text.substr(0, equals));
  std::vector<std::string> fields = split(text.substr(equals + 1), ':');
  for (std::string& f : fields) f = trim(f);
  if (!fields.empty() && (fields.back() == "log" || fields.back() == "lin")) {
    vary.logarithmic = fields.back() == "log";
    fields.pop_back();
  }
  if (vary.key.empty() || fields.size() < 2 || fields.size() > 3 || fields[0].empty() || fields[1].empty()) {
    throw Error(usage);
  }
  (void)key_parts(vary.key);
  vary.from_text = fields[0];
  vary.to_text = fields[1];
  if (fields.size() == 3) {
    const std::string& n = fields[2];
    std::size_t count = 0;
    const auto [end, ec] = std::from_chars(n.data(), n.data() + n.size(), count);
    if (ec != std::errc() || end != n.data() + n.size() || count == 0) {
      // A count past size_t's range is a number too: name the bound rather than "not a count".
      if (ec == std::errc::result_out_of_range) count = std::numeric_limits<std::size_t>::max();
      else throw Error("expected a point count >= 1 after TO, found \"" + n + "\"");
    }
    // Checked here, before the values are allocated (issue 14: 1000000000 died in std::bad_alloc
    // after 8 GB, 200000000 took 1.5 GB before it was refused).
    if (count > max_sweep_point_count) {
      throw Error("--vary " + vary.key + ": expected at most " + std::to_string(max_sweep_point_count) +
                  " points, found " + n);
    }
    vary.count = count;
  }
  return vary;
}

std::vector<double> sweep_values(double from, double to, std::size_t count, bool logarithmic) {
  if (count == 0) throw Error("expected a point count >= 1, found 0");
  if (!std::isfinite(from) || !std::isfinite(to)) throw Error("expected finite sweep limits");
  if (count == 1) {
    if (std::abs(from - to) > 1e-12 * std::max(std::abs(from), std::abs(to))) {
      throw Error("a sweep of 1 point needs FROM = TO");
    }
    return {from};
  }
  if (logarithmic && !(from * to > 0.0)) {
    throw Error("a logarithmic sweep needs FROM and TO of one sign and non-zero, found " + fmt::format("{:g}", from) +
                " and " + fmt::format("{:g}", to));
  }
  std::vector<double> values(count);
  const double steps = static_cast<double>(count - 1);
  for (std::size_t i = 0; i < count; ++i) {
    const double x = static_cast<double>(i) / steps;
    values[i] = logarithmic ? from * std::pow(to / from, x) : from + (to - from) * x;
  }
  values.back() = to;  // exact end point
  return values;
}

Dimension scenario_key_dimension(const toml::table& table, std::string_view key, std::string_view example_text) {
  const std::vector<std::string> parts = key_parts(key);
  if (const toml::node* node = find_key(table, parts)) {
    if (const auto* text = node->as_string()) {
      if (const std::optional<Dimension> d = dimension_of_text(text->get())) return *d;
    }
  }
  return dimension_of_text(example_text).value_or(Dimension::number);
}

SweepAxis make_axis(const toml::table& table, const VarySpec& vary) {
  SweepAxis axis;
  axis.key = vary.key;
  axis.dimension = scenario_key_dimension(table, vary.key, vary.from_text);
  auto parse = [&](const std::string& text) {
    try {
      return parse_quantity(text, axis.dimension);
    } catch (const Error& e) {
      throw Error("--vary " + vary.key + ": " + e.what());
    }
  };
  const double from = parse(vary.from_text);  // FROM first: its error comes first
  const double to = parse(vary.to_text);
  axis.values = sweep_values(from, to, vary.count, vary.logarithmic);
  return axis;
}

void set_scenario_key(toml::table& table, std::string_view key, double value, Dimension dimension) {
  const std::vector<std::string> parts = key_parts(key);
  toml::table& parent = parent_for_write(table, parts);
  const toml::node* existing = parent.get(parts.back());
  if (existing && existing->is_integer()) {
    const double rounded = std::round(value);
    if (std::abs(rounded - value) > 1e-9 * std::max(1.0, std::abs(value))) {
      throw Error("expected a whole number for '" + std::string(key) + "', found " + fmt::format("{:g}", value));
    }
    parent.insert_or_assign(parts.back(), static_cast<std::int64_t>(rounded));
    return;
  }
  if (dimension == Dimension::number || dimension == Dimension::fraction) {
    parent.insert_or_assign(parts.back(), value);
    return;
  }
  // Full precision with the unit: the section's reader then checks the unit for the key.
  parent.insert_or_assign(parts.back(), fmt::format("{:.17g} {}", value, unit_symbol(dimension)));
}

std::string WindowCriterion::label() const {
  switch (kind) {
    case Kind::band_clear: return band + " clear";
    case Kind::fundamental_outside: return "fundamental outside band " + band;
    case Kind::limits_met: return "limits met";
    case Kind::all: return "all criteria";
  }
  return "";
}

WindowCriterion parse_window_criterion(std::string_view band_name) {
  WindowCriterion criterion;
  criterion.band = trim(band_name);
  if (criterion.band.empty()) throw Error("expected a band name such as \"MW\" or \"B\", found \"\"");
  criterion.kind = find_band(criterion.band) ? WindowCriterion::Kind::fundamental_outside
                                             : WindowCriterion::Kind::band_clear;
  return criterion;
}

std::optional<std::string> thread_count_problem(std::string_view text) {
  unsigned count = 0;
  const auto [end, ec] = std::from_chars(text.data(), text.data() + text.size(), count);
  if (ec != std::errc() || end != text.data() + text.size() || count == 0 || count > max_worker_threads) {
    return "expected a thread count of 1.." + std::to_string(max_worker_threads) + ", found \"" + std::string(text) + "\"";
  }
  return std::nullopt;
}

unsigned sweep_thread_count(const char* environment_value) {
  if (environment_value && *environment_value) {
    const std::string_view text(environment_value);
    if (const auto problem = thread_count_problem(text)) throw Error("SPURCAST_THREADS: " + *problem);
    unsigned count = 0;
    (void)std::from_chars(text.data(), text.data() + text.size(), count);
    return count;
  }
  return std::max(1u, std::thread::hardware_concurrency());
}

SweepResult run_sweep(const toml::table& table, const std::string& file, const std::string& directory,
                      const ShippedData& data, const SweepOptions& options) {
  if (options.axes.empty()) throw Error("a sweep needs at least one --vary");
  if (!(options.tolerance_fraction >= 0.0 && options.tolerance_fraction < 0.5)) {
    throw Error("expected a tolerance from 0 to 50 %, found " + fmt::format("{:g} %", 100.0 * options.tolerance_fraction));
  }
  std::size_t total = 1;
  std::string grid_text;  // "--vary a (1000) x --vary b (2000)", for the message
  for (const SweepAxis& axis : options.axes) {
    if (axis.values.empty()) throw Error("the sweep of '" + axis.key + "' has no values");
    (void)key_parts(axis.key);
    grid_text += (grid_text.empty() ? "--vary " : " x --vary ") + axis.key + " (" + std::to_string(axis.values.size()) + ")";
    // Each factor is at most max_sweep_point_count (parse_vary), so the product cannot overflow
    // before it is compared.
    total *= axis.values.size();
    if (total > max_sweep_point_count) {
      throw Error(grid_text + ": expected at most " + std::to_string(max_sweep_point_count) +
                  " sweep points in all, found " + std::to_string(total));
    }
  }

  Context ctx;
  ctx.table = &table;
  ctx.file = file;
  ctx.directory = directory;
  ctx.options = &options;
  ctx.base = scenario_from_table(table, file, directory, data);
  bool shared_radiation = true;
  for (const SweepAxis& axis : options.axes) {
    const std::string section = key_parts(axis.key).front();
    if (section == "limits") ctx.reread_limits = true;
    if (section == "coupling" || section == "filter" || section == "lisn" || section == "converter") {
      ctx.shared_model = false;
    }
    if (section == "broadcast") ctx.shared_bands = false;
    if (section == "broadcast" || section == "supply" || section == "board") shared_radiation = false;
  }
  if (ctx.shared_model) ctx.model.emplace(ctx.base.coupling, ctx.base.filters, ctx.base.lisn, ctx.base.converter);
  ctx.bands = bands_for(ctx.base.broadcast, ctx.base.data);
  for (const Band& band : ctx.bands) ctx.channel_centres.push_back(band.channel_centres_hz());
  if (shared_radiation && !ctx.bands.empty()) {
    // Every line the reception estimate keeps (see evaluate_lines: within a bandwidth of a band,
    // widened by the drift tolerance), with a 1 % margin.
    const double tol = options.tolerance_fraction;
    double low = std::numeric_limits<double>::infinity(), high = 0.0;
    for (const Band& b : ctx.bands) {
      low = std::min(low, (b.low_hz - b.bandwidth_hz) / (1.0 + tol));
      high = std::max(high, (b.high_hz + b.bandwidth_hz) / (1.0 - tol));
    }
    if (low > 0.0 && high > low) {
      ctx.cable_table.emplace(radiation_setup(ctx.base.broadcast, ctx.base.supply, ctx.base.board), 0.99 * low,
                              1.01 * high);
    }
  }

  SweepResult result;
  result.axes = options.axes;
  result.tolerance_fraction = options.tolerance_fraction;
  result.guard_db = ctx.base.limits.guard_db;
  for (const SweepAxis& axis : options.axes) {
    (void)scenario_key_dimension(table, axis.key, "");  // checks the key's path
  }

  // Criteria, with the band names checked against the plan.
  ctx.criteria = options.criteria;
  if (ctx.criteria.size() > 1) ctx.criteria.push_back(WindowCriterion{WindowCriterion::Kind::all, ""});
  for (const WindowCriterion& c : ctx.criteria) {
    std::size_t index = 0;
    if (c.kind == WindowCriterion::Kind::band_clear) {
      const auto it = std::find_if(ctx.bands.begin(), ctx.bands.end(), [&](const Band& b) { return b.name == c.band; });
      if (it == ctx.bands.end()) {
        std::string names;
        for (const Band& b : ctx.bands) names += (names.empty() ? "" : ", ") + b.name;
        throw Error("no band \"" + c.band + "\" in the scenario's band plan (bands: " + names +
                    "; or a CISPR band A, B, C, D)");
      }
      index = static_cast<std::size_t>(it - ctx.bands.begin());
    }
    ctx.criterion_band.push_back(index);
  }
  result.criteria = ctx.criteria;

  // Columns: the line detectors that have a reading detector, and every limit line.
  for (const Detector d : all_detectors()) {
    const bool read = std::find(ctx.base.receiver.detectors.begin(), ctx.base.receiver.detectors.end(), d) !=
                      ctx.base.receiver.detectors.end();
    const bool limited = std::any_of(ctx.base.limits.sets.begin(), ctx.base.limits.sets.end(),
                                     [&](const LimitSet& s) { return s.line_for(d) != nullptr; });
    if (read && limited) ctx.detectors.push_back(d);
  }
  for (const LimitSet& set : ctx.base.limits.sets) {
    for (const LimitLine& line : set.lines) {
      const std::string label = line_label(set, line);
      if (ctx.limit_line_index.emplace(label, ctx.limit_lines.size()).second) ctx.limit_lines.push_back(label);
    }
  }
  result.detectors = ctx.detectors;
  result.limit_lines = ctx.limit_lines;
  for (const Band& b : ctx.bands) result.bands.push_back(b.name);

  // The grid: the first axis fastest.
  std::vector<std::vector<double>> grid(total, std::vector<double>(options.axes.size()));
  for (std::size_t i = 0; i < total; ++i) {
    std::size_t rest = i;
    for (std::size_t a = 0; a < options.axes.size(); ++a) {
      const std::size_t n = options.axes[a].values.size();
      grid[i][a] = options.axes[a].values[rest % n];
      rest /= n;
    }
  }

  const unsigned threads = options.threads ? options.threads : sweep_thread_count(std::getenv("SPURCAST_THREADS"));
  result.threads = static_cast<unsigned>(std::min<std::size_t>(threads, total));
  result.points.resize(total);
  std::mutex progress_mutex;
  std::size_t done = 0;
  parallel_for_each_index(total, result.threads, [&](std::size_t i) {
    result.points[i] = evaluate_point(ctx, grid[i]);
    if (options.on_point_done) {
      const std::lock_guard lock(progress_mutex);
      options.on_point_done(++done, total);
    }
  });

  for (const SweepPoint& p : result.points) {
    if (p.error) ++result.invalid_points;
  }
  if (result.invalid_points == total) {
    throw Error(point_label(options.axes, result.points.front().values) + ": " + *result.points.front().error);
  }
  if (result.invalid_points > 0) {
    const auto it = std::find_if(result.points.begin(), result.points.end(), [](const SweepPoint& p) { return p.error.has_value(); });
    result.notes.push_back(std::to_string(result.invalid_points) + " of " + std::to_string(total) +
                           " points were rejected by the scenario's checks, e.g. " +
                           point_label(options.axes, it->values) + ": " + *it->error);
  }
  const std::size_t scanned = static_cast<std::size_t>(
      std::count_if(result.points.begin(), result.points.end(), [](const SweepPoint& p) { return p.method == "scan"; }));
  if (scanned > 0) {
    result.notes.push_back(std::to_string(scanned) + (scanned == 1 ? " point" : " points") +
                           " went through the receiver scan (dithered or captured source, a boost PFC stage over the "
                           "mains cycle, or harmonics closer than 2 x B6): drift checked on the grid only");
  }
  if (ctx.limit_lines.empty()) {
    result.notes.push_back("the scenario gives no limit line: no point was compared with limits, so none meets them");
  }
  if (result.tolerance_fraction > 0.0) {
    result.notes.push_back("windows hold across +/-" + fmt::format("{:g}", 100.0 * result.tolerance_fraction) +
                           " % of " + options.axes.front().key +
                           " on the grid; the harmonics' drift k*f0*(1 +/- tolerance) is checked analytically against "
                           "every channel passband and limit line");
  }
  find_windows(result);
  return result;
}

std::string sweep_value_text(double value, Dimension dimension) { return format_value(value, dimension); }

bool sweep_goal_met(const SweepResult& result) {
  if (!result.criteria.empty()) {
    const std::size_t last = result.criteria.size() - 1;  // `all criteria` when there are several
    return std::any_of(result.windows.begin(), result.windows.end(), [&](const RobustWindow& w) { return w.criterion == last; });
  }
  return std::all_of(result.points.begin(), result.points.end(),
                     [](const SweepPoint& p) { return !p.error && p.limits_verdict == Verdict::pass; });
}

}  // namespace spurcast

#include "core/chain/prediction.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>

#include "core/input/error.hpp"
#include "core/radio/radiated.hpp"
#include "core/source/mains_cycle.hpp"
#include "core/source/source.hpp"
#include "core/source/spectrum.hpp"
#include "core/input/units.hpp"

namespace spurcast {

namespace {

/// Harmonics are computed up to the top of the FM allocations, so the broadcast estimate covers
/// every shipped band, and further when a receiver band reaches higher.
constexpr double broadcast_top_hz = 110e6;

double highest_frequency_hz(const std::vector<CisprBand>& bands) {
  double top = broadcast_top_hz;
  for (const CisprBand band : bands) {
    const BandParameters p = band_parameters(band);
    top = std::max(top, p.stop_hz + 2.0 * p.bandwidth_6db_hz);
  }
  return top;
}

/// Merges the band grid and the spot readings at the lines into one ascending list, so the
/// maximum of every isolated line is read exactly (as a lab's final measurement tunes onto it).
ScanResult scan_line_spectrum(const LineSpectrum& lines, const ScanPlan& grid_plan) {
  ScanResult grid = scan_lines(lines, grid_plan);
  const BandParameters p = band_parameters(grid_plan.band);
  ScanPlan spots = grid_plan;
  for (std::size_t i = 0; i < lines.harmonics.size(); ++i) {
    const double f = lines.frequency_hz(i);
    if (f >= p.start_hz && f <= p.stop_hz) spots.frequencies_hz.push_back(f);
  }
  if (spots.frequencies_hz.empty()) return grid;
  const ScanResult at_lines = scan_lines(lines, spots);
  grid.readings.insert(grid.readings.end(), at_lines.readings.begin(), at_lines.readings.end());
  std::stable_sort(grid.readings.begin(), grid.readings.end(),
                   [](const Reading& a, const Reading& b) { return a.frequency_hz < b.frequency_hz; });
  return grid;
}

/// As scan_line_spectrum, for a boost PFC stage's lines over the mains cycle: the band grid plus
/// readings tuned exactly onto every harmonic in the band.
ScanResult scan_modulated_line_spectrum(const ModulatedLines& lines, const ScanPlan& grid_plan) {
  ScanResult grid = scan_modulated_lines(lines, grid_plan);
  const BandParameters p = band_parameters(grid_plan.band);
  ScanPlan spots = grid_plan;
  const std::size_t count = lines.phases.empty() ? 0 : lines.phases.front().size();
  for (std::size_t i = 0; i < count; ++i) {
    const double f = static_cast<double>(i + 1) * lines.fundamental_hz;
    if (f >= p.start_hz && f <= p.stop_hz) spots.frequencies_hz.push_back(f);
  }
  if (spots.frequencies_hz.empty()) return grid;
  const ScanResult at_lines = scan_modulated_lines(lines, spots);
  grid.readings.insert(grid.readings.end(), at_lines.readings.begin(), at_lines.readings.end());
  std::stable_sort(grid.readings.begin(), grid.readings.end(),
                   [](const Reading& a, const Reading& b) { return a.frequency_hz < b.frequency_hz; });
  return grid;
}

/// The harmonic lines of a capture (Hann window, f0 given or estimated; the planner's plans shared
/// with the caller's other transforms of the record). With `consume`, the
/// capture's samples are freed as soon as the transform holds them (its other fields stay): a long
/// record is then resident once, not twice, while it is transformed.
LineSpectrum lines_from_capture(Capture& capture, std::vector<std::string>& notes, FftPlanner& planner, bool consume = false) {
  const double duration_s = capture.waveform.duration_s();
  const double sample_rate_hz = capture.waveform.sample_rate_hz;
  const Quantity quantity = capture.waveform.quantity;
  const AmplitudeSpectrum spectrum = consume ? amplitude_spectrum(std::move(capture.waveform), Window::hann, planner)
                                             : amplitude_spectrum(capture.waveform, Window::hann, planner);
  double f0 = 0.0;
  if (capture.switching_frequency_hz) {
    f0 = *capture.switching_frequency_hz;
  } else {
    f0 = estimate_fundamental(spectrum).frequency_hz;
    notes.push_back("switching frequency estimated from the capture: " + format_quantity(f0, Dimension::frequency, 6));
  }
  check_capture_covers_period(capture.file, duration_s, f0);
  const HarmonicTable table = harmonic_table(spectrum, f0, sample_rate_hz / 2.0);
  LineSpectrum lines;
  lines.quantity = quantity;
  lines.fundamental_hz = f0;
  lines.dc = table.dc;
  // A single capture drives one path; the phase of its lines does not change their magnitudes at
  // the LISN, so the lines carry their RMS magnitudes with zero phase.
  for (const HarmonicLevel& h : table.lines) lines.harmonics.emplace_back(h.rms, 0.0);
  return lines;
}

/// Gives the lines of a channel of a two-channel capture their phases: the Hann-windowed transform
/// of the record at the bin nearest k·f0. Both channels share the time base and each line sits at
/// the same k·f0 in both, so the window's phase error at that bin is the same for the two and their
/// relative phase is kept: what the sum of the two paths at the LISN depends on.
void phase_lines(const Waveform& waveform, LineSpectrum& lines) {
  const std::size_t n = waveform.samples.size();
  const std::vector<double> window = window_samples(Window::hann, n);
  std::vector<double> x(n);
  for (std::size_t i = 0; i < n; ++i) x[i] = waveform.samples[i] * window[i];
  FftPlanner planner;
  const std::vector<std::complex<double>> transform = planner.forward(x);
  for (std::size_t k = 0; k < lines.harmonics.size(); ++k) {
    const double bin = static_cast<double>(k + 1) * lines.fundamental_hz * static_cast<double>(n) / waveform.sample_rate_hz;
    const auto b = static_cast<std::size_t>(std::llround(bin));
    if (b >= transform.size()) break;
    lines.harmonics[k] = std::polar(std::abs(lines.harmonics[k]), std::arg(transform[b]));
  }
}

/// The distinct measuring distances of the radiated-field sets, in order of appearance.
std::vector<double> radiated_limit_distances(const std::vector<LimitSet>& sets) {
  std::vector<double> distances;
  for (const LimitSet& set : sets) {
    if (set.measures != LimitQuantity::radiated_field || !set.distance_m) continue;
    const double d = *set.distance_m;
    if (std::none_of(distances.begin(), distances.end(), [&](double x) { return std::abs(x - d) <= 1e-9 * d; })) {
      distances.push_back(d);
    }
  }
  return distances;
}

/// The receiver's readings of the radiated-field estimate in `band` at `distance_m`: the field of
/// every line (core/radio/radiated.hpp: CM cable and DM loop, the scenario's [broadcast] geometry)
/// with a +6 dB ground-plane reflection, since radiated limits are measured over a reflecting ground
/// and the antenna height scan finds the reinforcement (judgement: the upper bound of the two-ray
/// sum), then the band's receiver on those lines. Levels in dBµV/m.
std::string band_list(const std::vector<CisprBand>& bands) {
  std::string text;
  for (const CisprBand band : bands) text += (text.empty() ? "" : ", ") + to_string(band);
  return text;
}

/// The frequency ranges of each quantity that no reading covers, with the reason (for the margins'
/// `not computed` parts): bands not in the scenario, the part of a band above a capture's sample
/// rate, radiated fields outside bands C/D, conducted current everywhere.
std::vector<UnreadRange> unread_ranges(Prediction& p, const std::vector<CisprBand>& bands, bool skip_scans,
                                       double top_hz) {
  std::vector<UnreadRange> unread;
  constexpr double infinity = std::numeric_limits<double>::infinity();
  const std::string outside = "outside the CISPR bands the receiver emulates (9 kHz-1 GHz)";
  const BandParameters a = band_parameters(CisprBand::A);
  const BandParameters d = band_parameters(CisprBand::D);
  for (const LimitQuantity q : {LimitQuantity::conducted_voltage, LimitQuantity::radiated_field}) {
    unread.push_back({q, 0.0, a.start_hz, outside});
    unread.push_back({q, d.stop_hz, infinity, outside});
  }
  unread.push_back({LimitQuantity::conducted_current, 0.0, infinity,
                    "the chain computes LISN-port voltages and radiated fields, not probe currents"});
  const std::string scanned = " (the scenario's [receiver] bands are " + band_list(bands) + ")";
  for (const CisprBand band : {CisprBand::A, CisprBand::B, CisprBand::C, CisprBand::D}) {
    const BandParameters bp = band_parameters(band);
    const bool listed = std::find(bands.begin(), bands.end(), band) != bands.end();
    // Conducted voltage.
    if (skip_scans) {
      // Margins-only mode reads every line up to top_hz.
      if (listed && top_hz < bp.stop_hz) {
        unread.push_back({LimitQuantity::conducted_voltage, top_hz, bp.stop_hz, "no lines computed above " +
                                                                                    format_quantity(top_hz, Dimension::frequency)});
      }
    } else if (!listed) {
      unread.push_back({LimitQuantity::conducted_voltage, bp.start_hz, bp.stop_hz,
                        "band " + to_string(band) + " was not scanned" + scanned});
    } else {
      for (const BandScan& scan : p.scans) {
        if (scan.band != band || !scan.worst.read_up_to_hz) continue;
        unread.push_back({LimitQuantity::conducted_voltage, *scan.worst.read_up_to_hz, bp.stop_hz,
                          scan.worst.unread_reason});
        p.unread_bands.push_back({"band " + to_string(band), *scan.worst.read_up_to_hz, bp.stop_hz,
                                  scan.worst.unread_reason});
      }
    }
    // Radiated field: estimated in bands C and D only.
    if (band == CisprBand::A || band == CisprBand::B) {
      unread.push_back({LimitQuantity::radiated_field, bp.start_hz, bp.stop_hz,
                        "a radiated-field line is compared only with the radiated-field estimate of bands C "
                        "and D (30 MHz-1 GHz), never with a LISN voltage"});
    } else if (!listed || skip_scans) {
      unread.push_back({LimitQuantity::radiated_field, bp.start_hz, bp.stop_hz,
                        "band " + to_string(band) + " was not scanned, so it has no radiated-field estimate" + scanned});
    }
  }
  return unread;
}
}  // namespace

bool holds_whole_periods(const Capture& capture) {
  if (!capture.switching_frequency_hz) return false;
  const double periods = capture.waveform.duration_s() * *capture.switching_frequency_hz;
  // Within a twentieth of a sample per period of a whole number: the record wraps seamlessly.
  const double samples_per_period = capture.waveform.sample_rate_hz / *capture.switching_frequency_hz;
  return periods >= 1.0 && std::fabs(periods - std::round(periods)) * samples_per_period < 0.05 * periods + 0.5;
}

ScanResult worst_of_lines(const ScanResult& a, const std::optional<ScanResult>& b) {
  if (!b) return a;
  ScanResult worst = a;
  for (std::size_t i = 0; i < worst.readings.size() && i < b->readings.size(); ++i) {
    Reading& w = worst.readings[i];
    const Reading& r = b->readings[i];
    w.peak_db = std::max(w.peak_db, r.peak_db);
    w.quasi_peak_db = std::max(w.quasi_peak_db, r.quasi_peak_db);
    w.average_db = std::max(w.average_db, r.average_db);
  }
  for (const std::string& note : b->notes) {
    if (std::find(worst.notes.begin(), worst.notes.end(), note) == worst.notes.end()) worst.notes.push_back(note);
  }
  return worst;
}

/// Sample rate for the FFT receiver: 2.5× the highest frequency it must see (tuned frequency plus
/// twice the bandwidth), so the IF response stays clear of the Nyquist frequency.
double receiver_sample_rate_hz(CisprBand band) {
  const BandParameters p = band_parameters(band);
  return 2.5 * (p.stop_hz + 2.0 * p.bandwidth_6db_hz);
}

/// The record for a dithered source: whole modulation periods (or repeats), at least three of them and at
/// least 10 ms (the IF impulse response of band B lasts about 0.3 ms; the QP detector is run to
/// its periodic steady state on the record), bounded by max_record_samples.
double dithered_record_duration_s(const SwitchingSpec& spec, double sample_rate_hz, double requested_s,
                                  std::vector<std::string>& notes) {
  const double modulation_period_s = 1.0 / spec.dither->rate_hz;
  // A dither that repeats over several modulation periods: whole repeats, so the record is
  // exactly periodic (synthesize_* lays the repeat's cycles end to end).
  const std::optional<DitherRepeat> repeat = dither_repeat(spec);
  const double unit_s = repeat ? repeat->period_s : modulation_period_s;
  double duration_s = requested_s > 0.0 ? requested_s : std::max(3.0 * modulation_period_s, 10e-3);
  duration_s = std::ceil(duration_s / unit_s - 1e-9) * unit_s;
  const double limit_s = max_record_samples / sample_rate_hz;
  if (duration_s > limit_s) {
    duration_s = std::max(unit_s, std::floor(limit_s / unit_s) * unit_s);
    notes.push_back("the dithered record was shortened to " + format_quantity(duration_s, Dimension::time) +
                    " to bound memory");
  }
  return duration_s;
}

RadiatorCurrents radiator_currents(const Scenario& scenario, const LineSpectrum& switch_node_v,
                                   const LineSpectrum& input_current_a, const std::vector<std::size_t>& harmonics,
                                   const ConductedResult* conducted) {
  RadiatorCurrents currents;
  const double f0 = input_current_a.fundamental_hz > 0.0 ? input_current_a.fundamental_hz : switch_node_v.fundamental_hz;
  std::optional<BatteryCurrents> battery;
  if (scenario.supply.kind == SupplyKind::battery) {
    battery = battery_lead_currents(scenario.supply, scenario.coupling, switch_node_v, input_current_a);
  } else if (!conducted) {
    throw Error("the cable currents need the conducted solution");
  }
  for (const std::size_t k : harmonics) {
    currents.frequency_hz.push_back(static_cast<double>(k) * f0);
    const std::size_t i = k - 1;
    if (battery) {
      currents.cable_cm_per_conductor_a.push_back(i < battery->cm_per_conductor_a.size() ? std::abs(battery->cm_per_conductor_a[i]) : 0.0);
      currents.cable_dm_a.push_back(i < battery->dm_a.size() ? std::abs(battery->dm_a[i]) : 0.0);
    } else {
      currents.cable_cm_per_conductor_a.push_back(i < conducted->cm_current_a.size() ? std::abs(conducted->cm_current_a[i]) : 0.0);
      currents.cable_dm_a.push_back(i < conducted->dm_current_a.size() ? std::abs(conducted->dm_current_a[i]) : 0.0);
    }
    currents.hot_loop_a.push_back(i < input_current_a.harmonics.size() ? std::abs(input_current_a.harmonics[i]) : 0.0);
  }
  return currents;
}

ScanResult radiated_field_scan(const Prediction& p, const Scenario& scenario, CisprBand band, double distance_m,
                               const std::optional<double>& step_hz) {
  RadiationSetup setup = radiation_setup(scenario.broadcast, scenario.supply, scenario.board);
  setup.distance_m = distance_m;
  setup.ground_reflection = true;
  const std::size_t count = p.conducted ? p.conducted->frequency_hz.size()
                                        : std::max(p.switch_node_v.harmonics.size(), p.input_current_a.harmonics.size());
  std::vector<std::size_t> harmonics(count);
  for (std::size_t k = 0; k < count; ++k) harmonics[k] = k + 1;
  const std::vector<FieldLine> field = radiated_field(
      setup, radiator_currents(scenario, p.switch_node_v, p.input_current_a, harmonics, p.conducted ? &*p.conducted : nullptr));
  LineSpectrum lines;
  lines.quantity = Quantity::voltage;  // volts per metre
  lines.fundamental_hz = p.switch_node_v.fundamental_hz > 0.0 ? p.switch_node_v.fundamental_hz
                                                               : p.input_current_a.fundamental_hz;
  // Radiated limits are read with an electric-field antenna (CISPR 16-1-4): the E field.
  for (const FieldLine& line : field) lines.harmonics.emplace_back(dbuv_to_volts(line.e_total_dbuvm), 0.0);
  ScanPlan plan;
  plan.band = band;
  plan.step_hz = step_hz;
  return scan_line_spectrum(lines, plan);
}

std::string to_string(ReceiverPath path) {
  switch (path) {
    case ReceiverPath::lines: return "lines";
    case ReceiverPath::dithered_lines: return "dithered-lines";
    case ReceiverPath::sampled: return "sampled";
    case ReceiverPath::mains_gated: return "mains-gated-lines";
  }
  return "lines";
}

std::string to_string(SourceKind kind) {
  switch (kind) {
    case SourceKind::described: return "described";
    case SourceKind::dithered: return "dithered";
    case SourceKind::captured: return "captured";
  }
  return "described";
}

double receiver_bandwidth_at(const Prediction& p, double frequency_hz) {
  for (const BandScan& scan : p.scans) {
    const BandParameters band = band_parameters(scan.band);
    if (frequency_hz >= band.start_hz && frequency_hz <= band.stop_hz) return band.bandwidth_6db_hz;
  }
  return 9e3;
}

std::vector<WorstFrequency> worst_frequencies(const Prediction& p, std::size_t count) {
  std::vector<const MarginRow*> order;
  for (const MarginRow& row : p.margins.rows) order.push_back(&row);
  std::stable_sort(order.begin(), order.end(),
                   [](const MarginRow* a, const MarginRow* b) { return a->margin_db < b->margin_db; });
  std::vector<WorstFrequency> kept;
  for (const MarginRow* row : order) {
    if (kept.size() >= count) break;
    const double separation = receiver_bandwidth_at(p, row->frequency_hz);
    const bool near = std::any_of(kept.begin(), kept.end(), [&](const WorstFrequency& k) {
      return std::abs(k.row.frequency_hz - row->frequency_hz) < separation;
    });
    if (!near) kept.push_back({*row, separation});
  }
  return kept;
}

namespace {

/// Each requested frequency must lie inside one of `bands` and at or below `top_hz` (the highest
/// frequency the source's lines reach), on a supply with a LISN.
void check_explain_at(const std::vector<double>& frequencies_hz, const std::vector<CisprBand>& bands, bool battery,
                      double top_hz) {
  if (frequencies_hz.empty()) return;
  if (battery) {
    throw Error("explain-at: expected a supply with a LISN, found a battery supply (no conducted reading to explain)");
  }
  std::string ranges;
  for (const CisprBand band : bands) {
    const BandParameters range = band_parameters(band);
    const double stop = std::min(range.stop_hz, top_hz);
    ranges += (ranges.empty() ? "" : ", ") + std::string("band ") + to_string(band) + " " +
              format_quantity(range.start_hz, Dimension::frequency) + " - " +
              format_quantity(stop, Dimension::frequency);
  }
  for (const double f : frequencies_hz) {
    const bool inside = std::any_of(bands.begin(), bands.end(), [&](CisprBand band) {
      const BandParameters range = band_parameters(band);
      return std::isfinite(f) && f >= range.start_hz && f <= std::min(range.stop_hz, top_hz);
    });
    if (!inside) {
      throw Error("explain-at: expected a frequency inside the computed band" + std::string(bands.size() > 1 ? "s" : "") +
                  " (" + (ranges.empty() ? std::string("none") : ranges) + "), found " +
                  format_quantity(f, Dimension::frequency));
    }
  }
}

}  // namespace

Prediction predict(const Scenario& scenario, const PredictionOptions& options) {
  Prediction p;
  p.scenario = scenario;
  const std::vector<CisprBand> bands = options.bands.empty() ? scenario.receiver.bands : options.bands;
  const std::optional<double> step_hz = options.step_hz ? options.step_hz : scenario.receiver.step_hz;
  const double top_hz = highest_frequency_hz(bands);

  const ConductedModel model(scenario.coupling, scenario.filters, scenario.lisn, scenario.converter);
  const bool battery = scenario.supply.kind == SupplyKind::battery;
  p.setup_description = battery ? "battery supply: no LISN; " + format_quantity(scenario.supply.lead_length_m, Dimension::length) +
                                      " leads " + format_quantity(scenario.supply.lead_spacing_m, Dimension::length) + " apart"
                                : model.setup_description();
  const bool two_lines = model.line_count() == 2;
  check_explain_at(options.explain_at_hz, bands, battery, top_hz);
  for (const CisprBand band : bands) {
    const BandParameters range = band_parameters(band);
    for (const Resonance& r : find_resonances(model, range.start_hz, range.stop_hz, resonance_note_min_q)) {
      p.notes.push_back(resonance_note(r));
      p.resonances.push_back(r);
    }
  }

  std::optional<DitherRepeat> repeat;
  // A capture's spectra over the bins the band scans read (an absent one holds no bins): the
  // conducted path and the receiver work on bins, so the record is transformed once and its
  // samples are freed as soon as its harmonic lines are read.
  SampledSpectrum captured_v;
  SampledSpectrum captured_i;
  bool captured_whole_periods = false;
  std::optional<double> capture_nyquist_hz;
  if (scenario.switching) {
    const SwitchingSpec& spec = *scenario.switching;
    p.source_kind = spec.dither ? SourceKind::dithered : SourceKind::described;
    p.switch_node_v = switch_node_spectrum(spec, top_hz);
    p.input_current_a = input_current_spectrum(spec, top_hz);
    if (scenario.converter.topology == Topology::boost_pfc && !spec.dither) {
      p.receiver_path = ReceiverPath::mains_gated;
    } else if (scenario.converter.topology == Topology::boost_pfc) {
      p.notes.push_back("boost PFC stage with dither: the mains-cycle gating is not modelled with dither, the "
                        "readings are those of the crest of the mains cycle (pessimistic)");
    }
    if (spec.dither) {
      if (!options.sampled_dither) repeat = dither_repeat(spec);
      if (repeat) {
        p.receiver_path = ReceiverPath::dithered_lines;
        p.notes.push_back("dithered source: receiver readings come from the exact lines of the dithered waveform, which "
                          "repeats every " + std::to_string(repeat->modulation_periods) + " modulation period" +
                          (repeat->modulation_periods == 1 ? "" : "s") + " (" +
                          std::to_string(repeat->cycle_count) + " switching cycles, lines every " +
                          format_quantity(1.0 / repeat->period_s, Dimension::frequency) +
                          "); the harmonic tables show the undithered lines");
      } else {
        p.receiver_path = ReceiverPath::sampled;
        p.notes.push_back(std::string("dithered source: receiver readings come from a sampled record through the FFT "
                                      "receiver") +
                          (options.sampled_dither ? " (asked for)"
                                                  : " (the switching frequency is not a whole multiple of the dither "
                                                    "rate over " + std::to_string(max_dither_repeat_periods) +
                                                        " modulation periods or fewer, so the waveform does not repeat)") +
                          "; the harmonic tables show the undithered lines");
      }
    }
  } else {
    p.source_kind = SourceKind::captured;
    p.receiver_path = ReceiverPath::sampled;
    Capture capture = load_capture(*scenario.capture);
    captured_whole_periods = holds_whole_periods(capture);
    capture_nyquist_hz = capture.waveform.sample_rate_hz / 2.0;
    const bool scans = !options.skip_scans && !battery;
    std::vector<ScanPlan> plans;
    for (const CisprBand band : bands) {
      ScanPlan plan;
      plan.band = band;
      plan.step_hz = step_hz;
      plans.push_back(plan);
    }
    // A pair, not a structured binding: clang 14 cannot capture a binding in a lambda.
    const std::pair<double, double> span_hz = scan_span_hz(plans, capture.waveform.sample_rate_hz);
    FftPlanner planner;
    auto scanned_bins = [&](const Waveform& w) {
      return sampled_spectrum(w, span_hz.first, span_hz.second, planner);
    };
    if (scenario.capture->current_column) {
      // Both paths from one record (capture.hpp): the lines carry their phases.
      const LineSpectrum lines = lines_from_capture(capture, p.notes, planner);
      CaptureSpec spec = current_capture_spec(*scenario.capture);
      if (!spec.switching_frequency_hz) spec.switching_frequency_hz = lines.fundamental_hz;  // the voltage's f0
      Capture current = load_capture(spec);
      std::vector<std::string> ignored;
      p.switch_node_v = lines;
      p.input_current_a = lines_from_capture(current, ignored, planner);
      phase_lines(capture.waveform, p.switch_node_v);
      phase_lines(current.waveform, p.input_current_a);
      if (scans) {
        captured_v = scanned_bins(capture.waveform);
        captured_i = scanned_bins(current.waveform);
      }
      p.notes.push_back("captured source: the voltage capture drives the common-mode path (switch-node voltage) and "
                        "the current capture the differential-mode path (input current)");
    } else {
      const bool voltage = capture.waveform.quantity == Quantity::voltage;
      if (scans) (voltage ? captured_v : captured_i) = scanned_bins(capture.waveform);
      const LineSpectrum lines = lines_from_capture(capture, p.notes, planner, true);  // frees the samples
      (voltage ? p.switch_node_v : p.input_current_a) = lines;
      LineSpectrum& other = voltage ? p.input_current_a : p.switch_node_v;
      other.quantity = voltage ? Quantity::current : Quantity::voltage;
      other.fundamental_hz = lines.fundamental_hz;
    }
    const bool has_v = capture.waveform.quantity == Quantity::voltage || scenario.capture->current_column.has_value();
    const bool has_i = capture.waveform.quantity == Quantity::current || scenario.capture->current_column.has_value();
    p.common_mode_only = has_v && !has_i;
    p.differential_mode_only = has_i && !has_v;
    if (p.common_mode_only || p.differential_mode_only) {
      p.notes.push_back("captured source: the capture drives the " +
                        std::string(has_v ? "common-mode path (switch-node voltage)" : "differential-mode path (input current)") +
                        " only");
    }
  }
  if (!battery) p.conducted = conduct(p.switch_node_v, p.input_current_a, model);
  // A capture's lines stop at its Nyquist frequency: nothing above it was computed.
  p.computed_up_to_hz = capture_nyquist_hz ? *capture_nyquist_hz : top_hz;

  // Receiver scans per band (none for a battery supply: there is no LISN port to read).
  if (!options.skip_scans && !battery) {
    // A repeating dither: its exact lines up to the highest band's top, through the same network.
    std::optional<ConductedResult> dithered_conducted;
    if (p.receiver_path == ReceiverPath::dithered_lines) {
      double dither_top_hz = 0.0;
      for (const CisprBand band : bands) {
        const BandParameters range = band_parameters(band);
        dither_top_hz = std::max(dither_top_hz, range.stop_hz + 2.0 * range.bandwidth_6db_hz);
      }
      const SwitchingSpec& spec = *scenario.switching;
      dithered_conducted = conduct(dithered_switch_node_lines(spec, *repeat, dither_top_hz),
                                   dithered_input_current_lines(spec, *repeat, dither_top_hz), model,
                                   LineSolve::adaptive_grid);
    }
    // A boost PFC stage: its lines at each instant of the mains half-cycle, through the network
    // once, for the bands whose spans hold one harmonic each.
    std::vector<ModulatedLines> gated_ports;
    if (p.receiver_path == ReceiverPath::mains_gated) {
      const SwitchingSpec& spec = *scenario.switching;
      const MainsCycleSpec& mains = scenario.converter.mains;
      const double half_cycle_s = 0.5 / mains.mains_frequency_hz;
      MainsGating gating;
      double gated_top_hz = 0.0;
      for (const CisprBand band : bands) {
        const ModulatedReading reading = modulated_reading(spec.frequency_hz, half_cycle_s, band);
        gating.band_readings.emplace_back(band, reading);
        const BandParameters range = band_parameters(band);
        if (reading != ModulatedReading::several_harmonics) {
          gated_top_hz = std::max(gated_top_hz, range.stop_hz + 2.0 * range.bandwidth_6db_hz);
        }
      }
      const MainsCycle cycle = mains_cycle_lines(spec, mains, gated_top_hz > 0.0 ? gated_top_hz : spec.frequency_hz);
      gating.mains_frequency_hz = mains.mains_frequency_hz;
      gating.crest_input_v = cycle.crest_input_v;
      gating.switching_threshold_v = mains.switching_threshold_v;
      gating.switching_fraction = cycle.switching_fraction();
      gating.phases = cycle.phases;
      gating.conduction = cycle.conduction;
      gating.lowest_switching_hz = cycle.lowest_switching_hz;
      gating.highest_switching_hz = cycle.highest_switching_hz;
      gating.clamped_phases = cycle.clamped_phases;
      const bool critical = cycle.conduction == Conduction::critical;
      if (critical) {
        // Lines whose fundamental varies are read swept (receiver.hpp, ModulatedReading::swept).
        for (auto& band_reading : gating.band_readings) {
          if (band_reading.second != ModulatedReading::several_harmonics) band_reading.second = ModulatedReading::swept;
        }
      }
      if (gated_top_hz > 0.0) gated_ports = conduct_modulated(cycle.switch_node_v, cycle.input_current_a, model);
      std::string how;
      for (const auto& [band, reading] : gating.band_readings) {
        how += (how.empty() ? "" : ", ") + std::string("band ") + to_string(band) + " " +
               (reading == ModulatedReading::several_harmonics ? "at the crest (its span holds several harmonics)"
                                                               : to_string(reading));
      }
      if (critical) {
        p.notes.push_back(
            "critical-conduction boost PFC stage: constant on time (" +
            format_quantity(spec.duty / spec.frequency_hz, Dimension::time) + "), the switching frequency runs from " +
            format_quantity(cycle.lowest_switching_hz, Dimension::frequency) + " at the crest to " +
            format_quantity(cycle.highest_switching_hz, Dimension::frequency) + " near the zero crossing" +
            (cycle.clamped_phases > 0
                 ? " (clamped at " + format_quantity(max_critical_frequency_ratio, Dimension::number) +
                       " x the crest frequency over " + std::to_string(cycle.clamped_phases) + " of the " +
                       std::to_string(cycle.phases) + " instants, judgement: a controller's frequency clamp)"
                 : std::string()) +
            "; the current's triangle runs from zero to twice the mean in every cycle; the receiver reads the "
            "harmonics sweeping through its IF (path: swept mains-cycle lines)");
      }
      p.notes.push_back("boost PFC stage: receiver readings follow the " +
                        format_quantity(mains.mains_frequency_hz, Dimension::frequency) +
                        " mains over each half-cycle (crest input " + format_quantity(cycle.crest_input_v, Dimension::voltage) +
                        ", switching over " + format_quantity(100.0 * gating.switching_fraction, Dimension::number, 3) +
                        " % of it, " + std::to_string(cycle.phases) + " instants; " + how +
                        "); the harmonic tables, contributors and radiated and broadcast estimates show the crest of "
                        "the mains cycle");
      p.mains_gating = std::move(gating);
    }
    for (const CisprBand band : bands) {
      BandScan scan;
      scan.band = band;
      ScanPlan plan;
      plan.band = band;
      plan.step_hz = step_hz;
      // No reading falls below the receiver's own noise floor (a real receiver reads its noise
      // between the harmonics, not −400 dBµV).
      plan.noise_floor_db = scenario.receiver.noise_floor_dbuv.value_or(default_noise_floor_dbuv(band));
      const bool gated = !gated_ports.empty() &&
                         modulated_reading(gated_ports.front().fundamental_hz, gated_ports.front().modulation_period_s,
                                           band) != ModulatedReading::several_harmonics;
      if (gated) {
        scan.line1 = scan_modulated_line_spectrum(gated_ports[0], plan);
        if (two_lines) scan.line2 = scan_modulated_line_spectrum(gated_ports[1], plan);
      } else if (p.source_kind == SourceKind::described) {
        scan.line1 = scan_line_spectrum(p.conducted->line_spectrum(1), plan);
        if (two_lines) scan.line2 = scan_line_spectrum(p.conducted->line_spectrum(2), plan);
      } else if (dithered_conducted) {
        // The band grid only: the dithered lines lie closer than the RBW, none is read alone.
        plan.envelope_oversampling = dithered_envelope_oversampling;
        scan.line1 = scan_lines(dithered_conducted->line_spectrum(1), plan);
        if (two_lines) scan.line2 = scan_lines(dithered_conducted->line_spectrum(2), plan);
      } else if (p.source_kind == SourceKind::captured) {
        // The capture's spectra through the conducted path into the receiver, bin by bin.
        plan.periodic_record = captured_whole_periods;
        scan.line1 = scan_spectrum(lisn_port_spectrum(captured_v, captured_i, model, 1), plan);
        if (two_lines) scan.line2 = scan_spectrum(lisn_port_spectrum(captured_v, captured_i, model, 2), plan);
      } else {
        const SwitchingSpec& spec = *scenario.switching;
        const double fs = receiver_sample_rate_hz(band);
        const double duration_s = dithered_record_duration_s(spec, fs, options.record_duration_s, p.notes);
        const Waveform source_v = synthesize_switch_node(spec, fs, duration_s);
        const Waveform source_i = synthesize_input_current(spec, fs, duration_s);
        plan.slowest_modulation_hz = spec.dither->rate_hz;
        const Waveform port1 = lisn_port_waveform(source_v, source_i, model, 1);
        scan.line1 = scan_waveform(port1, plan);
        if (two_lines) scan.line2 = scan_waveform(lisn_port_waveform(source_v, source_i, model, 2), plan);
      }
      scan.worst = worst_of_lines(scan.line1, scan.line2);
      for (const std::string& note : scan.worst.notes) {
        const std::string text = "band " + to_string(band) + ": " + note;
        if (std::find(p.notes.begin(), p.notes.end(), text) == p.notes.end()) p.notes.push_back(text);
      }
      p.scans.push_back(std::move(scan));
    }
  }

  // Margins against the scenario's limit lines: LISN-port voltages with conducted-voltage lines,
  // radiated-field estimates with radiated-field lines (core/compliance/margins.hpp).
  std::vector<LevelReading> readings;
  for (const BandScan& scan : p.scans) {
    const auto band_readings = readings_from_scan(scan.worst.readings, scenario.receiver.detectors);
    readings.insert(readings.end(), band_readings.begin(), band_readings.end());
  }
  if (options.skip_scans && p.conducted) {
    // A periodic source's isolated line reads its RMS value on every detector (CISPR 16-1-1
    // calibration); the sweep uses this when the harmonics are far apart compared with the RBW.
    for (std::size_t k = 0; k < p.conducted->frequency_hz.size(); ++k) {
      const double level = volts_to_dbuv(std::max(std::abs(p.conducted->line1_v[k]),
                                                  two_lines ? std::abs(p.conducted->line2_v[k]) : 0.0));
      for (const Detector d : scenario.receiver.detectors) readings.push_back({p.conducted->frequency_hz[k], d, level});
    }
  }
  if (!options.skip_scans) {
    for (const double distance_m : radiated_limit_distances(scenario.limits.sets)) {
      for (const CisprBand band : bands) {
        if (band != CisprBand::C && band != CisprBand::D) continue;
        RadiatedScan radiated{band, distance_m, radiated_field_scan(p, scenario, band, distance_m, step_hz)};
        const auto field_readings = readings_from_scan(radiated.scan.readings, scenario.receiver.detectors,
                                                       LimitQuantity::radiated_field, distance_m);
        readings.insert(readings.end(), field_readings.begin(), field_readings.end());
        p.radiated_scans.push_back(std::move(radiated));
      }
    }
    if (!p.radiated_scans.empty()) {
      p.notes.push_back(std::string("radiated-field readings are estimates (E field of the supply cable and the hot loop at "
                                    "the limit's distance, with a +6 dB ground-plane reflection), not a measurement") +
                        (p.source_kind == SourceKind::dithered ? "; they use the undithered lines" : ""));
    }
  }
  MarginOptions margin_options;
  margin_options.guard_db = scenario.limits.guard_db;
  margin_options.unread = unread_ranges(p, bands, options.skip_scans, top_hz);
  if (options.skip_report_details) margin_options.closest_count = 0;
  p.margins = compare_with_limits(readings, scenario.limits.sets, margin_options);
  p.verdict = p.margins.verdict;
  // What makes each of the worst LISN-port readings (the five the terminal lists).
  if (p.conducted && !options.skip_scans && !options.skip_report_details) {
    std::vector<double> frequencies, bandwidths;
    for (const WorstFrequency& w : worst_frequencies(p, 5)) {
      if (w.row.quantity != LimitQuantity::conducted_voltage) continue;
      frequencies.push_back(w.row.frequency_hz);
      bandwidths.push_back(w.separation_hz);
    }
    p.contributors = contributors_at(scenario, *p.conducted, p.switch_node_v, p.input_current_a, p.resonances,
                                     frequencies, bandwidths);
  }
  if (!options.explain_at_hz.empty()) {
    // A capture's lines stop at its Nyquist frequency: above it nothing was computed.
    check_explain_at(options.explain_at_hz, bands, battery, p.computed_up_to_hz);
    if (!p.conducted) throw Error("explain-at: expected a conducted prediction, found none (no source lines)");
    std::vector<double> bandwidths;
    for (const double f : options.explain_at_hz) bandwidths.push_back(receiver_bandwidth_at(p, f));
    p.contributors_requested = contributors_at(scenario, *p.conducted, p.switch_node_v, p.input_current_a,
                                               p.resonances, options.explain_at_hz, bandwidths);
  }
  if (battery) {
    p.notes.push_back("battery supply: no LISN, no conducted limits apply; the leads carry the differential-mode "
                      "loop current and a common-mode current returned through the product's self-capacitance");
  } else if (scenario.limits.sets.empty()) {
    p.notes.push_back("no limit lines in the scenario: nothing was compared (verdict: no limits)");
  } else if (p.margins.compared_readings == 0) {
    p.notes.push_back("no reading fell on a limit line (check the bands and the lines' frequency ranges)");
  }

  // Broadcast reception: fields of the radiators (cable CM and DM, hot loop), then the estimate.
  const RadiationSetup setup = radiation_setup(scenario.broadcast, scenario.supply, scenario.board);
  p.radiation_convention = radiation_convention(setup);
  std::vector<std::size_t> harmonics(
      p.conducted ? p.conducted->frequency_hz.size()
                  : std::max(p.switch_node_v.harmonics.size(), p.input_current_a.harmonics.size()));
  for (std::size_t k = 0; k < harmonics.size(); ++k) harmonics[k] = k + 1;
  p.field = radiated_field(setup, radiator_currents(scenario, p.switch_node_v, p.input_current_a, harmonics,
                                                    p.conducted ? &*p.conducted : nullptr));
  if (!setup.hot_loop_area_m2) {
    p.notes.push_back("no [board] hot_loop_area: the switching cell's loop, usually the strongest radiator near "
                      "the product, is left out");
  } else if (p.input_current_a.harmonics.empty()) {
    p.notes.push_back("the source gives no input current: the hot loop carries nothing");
  }
  ReceiverLines lines = receiver_lines(p.field);
  if (p.source_kind == SourceKind::dithered) lines.dither = *scenario.switching->dither;
  p.reception = estimate_reception(bands_for(scenario.broadcast, scenario.data), lines, scenario.broadcast,
                                   p.computed_up_to_hz);
  p.reception_assumptions = reception_assumptions(scenario.broadcast, setup, p.reception, battery);
  return p;
}

}  // namespace spurcast

#include "core/chain/scan_at.hpp"

#include <algorithm>

#include "core/chain/prediction.hpp"
#include "core/coupling/conducted.hpp"
#include "core/input/error.hpp"
#include "core/source/capture.hpp"
#include "core/input/units.hpp"
#include "core/source/mains_cycle.hpp"
#include "core/source/source.hpp"
#include "core/source/spectrum.hpp"

namespace spurcast {

std::vector<ScanPlan> scan_plans(const Scenario& scenario, const ScanRequest& request) {
  // One plan per band; spot frequencies go to the given band or to the band that holds each.
  std::vector<ScanPlan> plans;
  if (!request.frequencies_hz.empty()) {
    for (const double f : request.frequencies_hz) {
      const CisprBand band = request.band ? *request.band : band_for_frequency(f);
      auto plan = std::find_if(plans.begin(), plans.end(), [&](const ScanPlan& p) { return p.band == band; });
      if (plan == plans.end()) {
        ScanPlan spot_plan;
        spot_plan.band = band;
        spot_plan.threads = request.threads;
        plans.push_back(spot_plan);
        plan = plans.end() - 1;
      }
      plan->frequencies_hz.push_back(f);
    }
  } else {
    const std::vector<CisprBand> bands = request.band ? std::vector<CisprBand>{*request.band} : scenario.receiver.bands;
    for (const CisprBand band : bands) {
      ScanPlan band_plan;
      band_plan.band = band;
      band_plan.threads = request.threads;
      band_plan.step_hz = request.step_hz ? request.step_hz : scenario.receiver.step_hz;
      if (request.step_hz) band_plan.step_origin = request.step_origin;
      plans.push_back(band_plan);
    }
  }
  std::sort(plans.begin(), plans.end(), [](const ScanPlan& a, const ScanPlan& b) { return a.band < b.band; });
  for (const ScanPlan& plan : plans) (void)plan_frequencies(plan);  // check steps and ranges before any work
  return plans;
}

namespace {

/// A capture's spectra over the bins that every plan reads (scan_span_hz), taken once for all bands:
/// the receiver and the conducted path read bins, so the record never returns to the time domain
/// and its samples are freed once transformed.
struct CapturedSpectra {
  SampledSpectrum v;  ///< the switch-node voltage; no bins when absent
  SampledSpectrum i;  ///< the input current; no bins when absent
  bool periodic_record = false;
};

CapturedSpectra captured_spectra(const Scenario& scenario, const std::string& at, const std::vector<ScanPlan>& plans) {
  CapturedSpectra spectra;
  Capture capture = load_capture(*scenario.capture);
  const bool is_current = capture.waveform.quantity == Quantity::current;
  const bool two_channels = scenario.capture->current_column.has_value();
  if (at == "current" && !is_current && !two_channels) {
    throw Error("expected a current capture for --at current, found a voltage capture (use --at source)");
  }
  spectra.periodic_record = holds_whole_periods(capture);
  const auto [low_hz, high_hz] = scan_span_hz(plans, capture.waveform.sample_rate_hz);
  const unsigned threads = plans.empty() ? 0 : plans.front().threads;
  FftPlanner planner;
  (is_current ? spectra.i : spectra.v) = sampled_spectrum(capture.waveform, low_hz, high_hz, planner, threads);
  std::vector<double>().swap(capture.waveform.samples);
  // A two-channel capture: the current channel drives the differential-mode path.
  if (two_channels && at != "source") {
    spectra.i = sampled_spectrum(load_capture(current_capture_spec(*scenario.capture)).waveform, low_hz, high_hz, planner, threads);
  }
  return spectra;
}

/// Scans one band (or spot frequencies within it) at the requested point of the chain; a capture's
/// spectra come in `captured` (required for a captured scenario).
ScanResult scan_plan(const Scenario& scenario, const std::string& at, const ScanPlan& plan, const CapturedSpectra* captured) {
  const BandParameters band = band_parameters(plan.band);
  const double top_hz = band.stop_hz + 2.0 * band.bandwidth_6db_hz;
  std::vector<std::string> notes;
  std::optional<ConductedModel> model;
  if (at == "lisn") model.emplace(scenario.coupling, scenario.filters, scenario.lisn, scenario.converter);

  auto scan_two_lines = [&](auto&& scan_line) {
    std::optional<ScanResult> line2;
    if (model->line_count() == 2) line2 = scan_line(2);
    return worst_of_lines(scan_line(1), line2);
  };

  ScanResult result;
  // A dither that repeats: the exact lines of its repeat (source.hpp, DitherRepeat), as predict() reads them.
  const std::optional<DitherRepeat> repeat =
      scenario.switching && scenario.switching->dither ? dither_repeat(*scenario.switching) : std::nullopt;
  if (repeat) {
    const SwitchingSpec& spec = *scenario.switching;
    ScanPlan dense_plan = plan;
    dense_plan.envelope_oversampling = dithered_envelope_oversampling;
    notes.push_back("dithered source: read from the exact lines of its repeat (" +
                    std::to_string(repeat->modulation_periods) + " modulation period" +
                    (repeat->modulation_periods == 1 ? "" : "s") + ")");
    if (at == "source") {
      result = scan_lines(dithered_switch_node_lines(spec, *repeat, top_hz), dense_plan);
    } else if (at == "current") {
      result = scan_lines(dithered_input_current_lines(spec, *repeat, top_hz), dense_plan);
    } else {
      const ConductedResult conducted = conduct(dithered_switch_node_lines(spec, *repeat, top_hz),
                                                dithered_input_current_lines(spec, *repeat, top_hz), *model,
                                                LineSolve::adaptive_grid);  // as predict() solves them
      result = scan_two_lines([&](int line) { return scan_lines(conducted.line_spectrum(line), dense_plan); });
    }
  } else if (scenario.switching && !scenario.switching->dither && scenario.converter.topology == Topology::boost_pfc &&
             modulated_reading(scenario.switching->frequency_hz, 0.5 / scenario.converter.mains.mains_frequency_hz,
                               plan.band) != ModulatedReading::several_harmonics) {
    // A boost PFC stage: its lines over the mains half-cycle, as predict() reads them.
    const MainsCycle cycle = mains_cycle_lines(*scenario.switching, scenario.converter.mains, top_hz);
    notes.push_back("boost PFC stage: read over the " +
                    format_quantity(cycle.mains_frequency_hz, Dimension::frequency) + " mains half-cycle (" +
                    (cycle.conduction == Conduction::critical
                         ? "critical conduction, " + format_quantity(cycle.lowest_switching_hz, Dimension::frequency) +
                               " to " + format_quantity(cycle.highest_switching_hz, Dimension::frequency) + ", swept"
                         : to_string(modulated_reading(cycle.switch_node_v.fundamental_hz,
                                                       cycle.switch_node_v.modulation_period_s, plan.band))) +
                    ", switching over " + format_quantity(100.0 * cycle.switching_fraction(), Dimension::number, 3) +
                    " % of it)");
    if (at == "source") {
      result = scan_modulated_lines(cycle.switch_node_v, plan);
    } else if (at == "current") {
      result = scan_modulated_lines(cycle.input_current_a, plan);
    } else {
      const std::vector<ModulatedLines> ports = conduct_modulated(cycle.switch_node_v, cycle.input_current_a, *model);
      result = scan_two_lines([&](int line) { return scan_modulated_lines(ports[static_cast<std::size_t>(line - 1)], plan); });
    }
  } else if (scenario.switching && !scenario.switching->dither) {
    // Periodic, undithered: exact line spectra, no sampling.
    if (scenario.converter.topology == Topology::boost_pfc) {
      notes.push_back("boost PFC stage: band " + to_string(plan.band) +
                      "'s span holds several harmonics, read at the crest of the mains cycle");
    }
    const SwitchingSpec& spec = *scenario.switching;
    if (at == "source") {
      result = scan_lines(switch_node_spectrum(spec, top_hz), plan);
    } else if (at == "current") {
      result = scan_lines(input_current_spectrum(spec, top_hz), plan);
    } else {
      const ConductedResult conducted =
          conduct(switch_node_spectrum(spec, top_hz), input_current_spectrum(spec, top_hz), *model);
      result = scan_two_lines([&](int line) { return scan_lines(conducted.line_spectrum(line), plan); });
    }
  } else if (scenario.switching) {
    // Dithered without a repeat: a synthesized record through the FFT receiver, as the prediction makes it.
    const SwitchingSpec& spec = *scenario.switching;
    const double fs = receiver_sample_rate_hz(plan.band);
    const double duration_s = dithered_record_duration_s(spec, fs, 0.0, notes);
    Waveform source_v;
    Waveform source_i;
    if (at != "current") source_v = synthesize_switch_node(spec, fs, duration_s);
    if (at != "source") source_i = synthesize_input_current(spec, fs, duration_s);
    ScanPlan sampled_plan = plan;
    sampled_plan.slowest_modulation_hz = spec.dither->rate_hz;
    if (at == "source") {
      result = scan_waveform(source_v, sampled_plan);
    } else if (at == "current") {
      result = scan_waveform(source_i, sampled_plan);
    } else {
      result = scan_two_lines([&](int line) {
        return scan_waveform(lisn_port_waveform(source_v, source_i, *model, line), sampled_plan);
      });
    }
  } else {
    // A capture: read from its spectra, taken once for every band (captured_spectra).
    const CapturedSpectra& spectra = *captured;
    ScanPlan captured_plan = plan;
    captured_plan.periodic_record = spectra.periodic_record;
    if (at == "source") {
      result = scan_spectrum(spectra.v.bins.empty() ? spectra.i : spectra.v, captured_plan);
    } else if (at == "current") {
      result = scan_spectrum(spectra.i, captured_plan);
    } else {
      result = scan_two_lines([&](int line) {
        return scan_spectrum(lisn_port_spectrum(spectra.v, spectra.i, *model, line), captured_plan);
      });
    }
  }
  // The receiver's own noise floor, as the prediction applies it (prediction.cpp): a real receiver
  // reads its noise between the harmonics, not −400 dBµV (issue 14). The floor is a voltage at the
  // receiver's input, so it holds the voltage readings (at the LISN port and at the source); a
  // current is read through a probe whose transfer impedance is not modelled, so it has none.
  if (result.quantity == Quantity::voltage) {
    if (!plan.noise_floor_db) {
      apply_noise_floor(result, scenario.receiver.noise_floor_dbuv.value_or(default_noise_floor_dbuv(plan.band)));
    }
  } else if (!result.noise_floor_db) {
    notes.push_back("no receiver noise floor on current readings (the floor is a voltage at the receiver's input; "
                    "a current probe's transfer impedance is not modelled)");
  }
  result.notes.insert(result.notes.begin(), notes.begin(), notes.end());
  return result;
}

}  // namespace

ScanResult scan_at(const Scenario& scenario, const std::string& at, const ScanPlan& plan) {
  if (!scenario.capture) return scan_plan(scenario, at, plan, nullptr);
  const CapturedSpectra captured = captured_spectra(scenario, at, {plan});
  return scan_plan(scenario, at, plan, &captured);
}

ScanReport scan_scenario(const Scenario& scenario, const ScanRequest& request, const std::function<void(CisprBand)>& on_band) {
  if (request.at != "source" && request.at != "current" && request.at != "lisn") {
    throw Error("expected --at source, current or lisn, found \"" + request.at + "\"");
  }
  if (!scenario.switching && !scenario.capture) {
    throw Error(SourcePosition{scenario.file, 0, 0}, "expected a [switching] or [capture] section");
  }
  ScanReport report;
  report.scenario_file = scenario.file;
  report.at = request.at;
  report.spot = !request.frequencies_hz.empty();
  report.detectors = scenario.receiver.detectors;
  const std::vector<ScanPlan> plans = scan_plans(scenario, request);
  // A capture is loaded and transformed once for every band.
  std::optional<CapturedSpectra> captured;
  if (scenario.capture && !scenario.switching) {
    if (on_band && !plans.empty()) on_band(plans.front().band);
    captured = captured_spectra(scenario, request.at, plans);
  }
  for (const ScanPlan& plan : plans) {
    if (on_band) on_band(plan.band);
    report.bands.push_back(scan_plan(scenario, request.at, plan, captured ? &*captured : nullptr));
  }
  return report;
}

}  // namespace spurcast

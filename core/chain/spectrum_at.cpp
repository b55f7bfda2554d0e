#include "core/chain/spectrum_at.hpp"

#include <algorithm>
#include <cmath>
#include <complex>
#include <thread>
#include <utility>

#include "core/coupling/conducted.hpp"
#include "core/input/error.hpp"
#include "core/input/units.hpp"
#include "core/source/source.hpp"

namespace spurcast {

namespace {

SpectrumRow make_row(int harmonic, double frequency_hz, double level) {
  SpectrumRow row;
  row.harmonic = harmonic;
  row.frequency_hz = frequency_hz;
  row.level_db = level;
  return row;
}

std::vector<SpectrumRow> rows_from_lines(const LineSpectrum& lines) {
  std::vector<SpectrumRow> rows;
  for (std::size_t k = 0; k < lines.harmonics.size(); ++k) {
    rows.push_back(make_row(static_cast<int>(k + 1), lines.frequency_hz(k), level_db(std::abs(lines.harmonics[k]), lines.quantity)));
  }
  return rows;
}

std::vector<SpectrumRow> rows_from_table(const HarmonicTable& table) {
  std::vector<SpectrumRow> rows;
  for (const HarmonicLevel& line : table.lines) rows.push_back(make_row(line.harmonic, line.frequency_hz, line.level_db));
  return rows;
}

/// Fills the LISN columns of `rows` (level = the higher line) from per-line levels.
void set_lisn_columns(std::vector<SpectrumRow>& rows, const std::vector<double>& line1, const std::vector<double>& line2,
                      const std::vector<double>& dm, const std::vector<double>& cm) {
  for (std::size_t i = 0; i < rows.size(); ++i) {
    rows[i].line1_db = line1[i];
    rows[i].line2_db = line2[i];
    rows[i].dm_db = dm[i];
    rows[i].cm_db = cm[i];
    rows[i].level_db = std::max(line1[i], line2[i]);
  }
}

std::vector<double> levels_of(const std::vector<std::complex<double>>& phasors, std::size_t count) {
  std::vector<double> out(count, level_floor_db);
  for (std::size_t i = 0; i < std::min(count, phasors.size()); ++i) out[i] = level_db(std::abs(phasors[i]), Quantity::voltage);
  return out;
}

/// The harmonic table of a sampled record at f0 (estimated when not given). Takes the record by
/// value: callers move it in at its last use, and the spectrum frees it once windowed.
HarmonicTable sampled_table(Waveform waveform, Window window, FftPlanner& planner, unsigned threads, std::optional<double> f0_hz,
                            double max_frequency_hz, SpectrumResult& result) {
  const AmplitudeSpectrum spectrum = amplitude_spectrum(std::move(waveform), window, planner, threads);
  if (result.fundamental_hz == 0.0) {
    // A given f_sw is used as given (harmonic_table refuses one the record cannot read); it is
    // estimated only when none was given.
    result.fundamental_hz = f0_hz ? *f0_hz : estimate_fundamental(spectrum).frequency_hz;
    result.fundamental_estimated = !f0_hz.has_value();
  }
  return harmonic_table(spectrum, result.fundamental_hz, max_frequency_hz);
}

SpectrumResult sampled_result(Capture capture, FftPlanner& planner, const SpectrumSettings& settings, std::optional<double> f0_hz,
                      double max_frequency_hz, const std::string& at, const Scenario* scenario,
                      std::optional<Capture> current = std::nullopt) {
  // A two-channel capture: --at current reads the current channel; --at lisn drives both paths.
  if (current && at == "current") {
    capture = std::move(*current);
    current.reset();
  }
  SpectrumResult result;
  result.capture_samples = capture.waveform.samples.size();
  result.capture_duration_s = capture.waveform.duration_s();
  result.at = at;
  const Window window = settings.window;
  result.window = window_name(window);
  if (f0_hz) check_capture_covers_period(capture, *f0_hz);
  const bool is_current = capture.waveform.quantity == Quantity::current;
  if (at == "current" && !is_current) {
    throw Error("expected a current capture for --at current, found a voltage capture (use --at source)");
  }
  if (at != "lisn") {
    result.what = is_current ? "captured current" : "captured voltage";
    result.quantity = capture.waveform.quantity;
    result.rows = rows_from_table(sampled_table(std::move(capture.waveform), window, planner, settings.threads, f0_hz, max_frequency_hz, result));
  } else {
    const ConductedModel model(scenario->coupling, scenario->filters, scenario->lisn, scenario->converter);
    Waveform source_v;
    Waveform source_i;
    (is_current ? source_i : source_v) = capture.waveform;
    if (current) source_i = current->waveform;
    const Waveform v1 = lisn_port_waveform(source_v, source_i, model, 1);
    Waveform v2 = v1;
    if (model.line_count() == 2) {
      v2 = lisn_port_waveform(source_v, source_i, model, 2);
    } else {
      std::fill(v2.samples.begin(), v2.samples.end(), 0.0);
    }
    Waveform dm = v1;
    Waveform cm = v1;
    for (std::size_t i = 0; i < v1.samples.size(); ++i) {
      dm.samples[i] = 0.5 * (v1.samples[i] - v2.samples[i]);
      cm.samples[i] = 0.5 * (v1.samples[i] + v2.samples[i]);
    }
    result.what = "LISN receiver port (from the captured " +
                  std::string(current ? "voltage and current" : is_current ? "current" : "voltage") + ")";
    result.quantity = Quantity::voltage;
    // The source record sets f0 (estimated once, on the source); the port records are read at it.
    (void)sampled_table(std::move(capture.waveform), window, planner, settings.threads, f0_hz, max_frequency_hz, result);
    auto levels = [&](Waveform&& w) {
      std::vector<double> out;
      for (const HarmonicLevel& line : sampled_table(std::move(w), window, planner, settings.threads, f0_hz, max_frequency_hz, result).lines) {
        out.push_back(line.level_db);
      }
      return out;
    };
    result.rows = rows_from_table(sampled_table(v1, window, planner, settings.threads, f0_hz, max_frequency_hz, result));
    std::vector<double> l1;
    for (const SpectrumRow& row : result.rows) l1.push_back(row.level_db);
    std::vector<double> l2 = levels(std::move(v2));
    std::vector<double> ldm = levels(std::move(dm));
    std::vector<double> lcm = levels(std::move(cm));
    for (auto* l : {&l2, &ldm, &lcm}) l->resize(l1.size(), level_floor_db);
    set_lisn_columns(result.rows, l1, l2, ldm, lcm);
    result.notes.push_back(model.setup_description());
  }
  std::vector<double>().swap(capture.waveform.samples);  // moved from above; the metadata stays
  result.capture = std::move(capture);
  return result;
}

SpectrumResult described_result(const Scenario& scenario, const std::string& at, double max_frequency_hz) {
  const SwitchingSpec& spec = *scenario.switching;
  SpectrumResult result;
  result.at = at;
  result.fundamental_hz = spec.frequency_hz;
  if (spec.dither) result.notes.push_back("dither is not applied to the line spectrum (the undithered source is shown)");
  if (scenario.converter.topology == Topology::boost_pfc) {
    result.notes.push_back("boost PFC stage: the lines are those of the crest of the mains cycle (predict and scan "
                           "read the mains cycle)");
  }
  if (at == "source" || at == "current") {
    const bool current = at == "current";
    const LineSpectrum lines = current ? input_current_spectrum(spec, max_frequency_hz) : switch_node_spectrum(spec, max_frequency_hz);
    result.what = current ? "pulsed input current (described)" : "switch-node voltage (described)";
    result.quantity = lines.quantity;
    result.rows = rows_from_lines(lines);
    const double amplitude = current ? spec.current_a : spec.amplitude_v;
    for (SpectrumRow& row : result.rows) {
      row.envelope_db = level_db(trapezoid_envelope_rms(spec, amplitude, row.frequency_hz), lines.quantity);
    }
    return result;
  }
  const ConductedModel model(scenario.coupling, scenario.filters, scenario.lisn, scenario.converter);
  const ConductedResult conducted =
      conduct(switch_node_spectrum(spec, max_frequency_hz), input_current_spectrum(spec, max_frequency_hz), model);
  result.what = "LISN receiver port (described source)";
  result.quantity = Quantity::voltage;
  const std::size_t count = conducted.frequency_hz.size();
  for (std::size_t i = 0; i < count; ++i) result.rows.push_back(make_row(static_cast<int>(i + 1), conducted.frequency_hz[i], 0.0));
  set_lisn_columns(result.rows, levels_of(conducted.line1_v, count), levels_of(conducted.line2_v, count),
                   levels_of(conducted.dm_v, count), levels_of(conducted.cm_v, count));
  result.notes.push_back(conducted.setup);
  return result;
}

/// Loads a capture while planning its transform: the plan (FFTW computes every twiddle, tens of
/// milliseconds for millions of points) is made on a second thread as soon as the parser knows
/// the record length, while the loader checks the sampling and assembles the record.
class CaptureWithPlan {
 public:
  CaptureWithPlan(const CaptureSpec& spec, unsigned threads) {
    CaptureLoadOptions load{threads};
    load.on_sample_count = [this](std::size_t samples) {
      planning_.thread = std::thread([this, samples] {
        try {
          planner_.prepare(spectrum_transform_length(samples));
        } catch (const std::exception&) {
          // The transform plans again, and reports, when it runs.
        }
      });
    };
    capture_ = load_capture(spec, load);
  }
  CaptureWithPlan(const CaptureWithPlan&) = delete;
  CaptureWithPlan& operator=(const CaptureWithPlan&) = delete;
  [[nodiscard]] Capture take_capture() { return std::move(capture_); }
  [[nodiscard]] FftPlanner& planner() { return planner_; }

 private:
  // Joins in its destructor, which also runs when load_capture throws from the constructor;
  // declared after the planner, so it is joined before the planner goes.
  struct JoiningThread {
    std::thread thread;
    ~JoiningThread() {
      if (thread.joinable()) thread.join();
    }
  };
  FftPlanner planner_;
  JoiningThread planning_;
  Capture capture_;
};

}  // namespace

std::string capture_point(const std::string& at) {
  const std::string point = at.empty() ? "source" : at;
  if (point == "lisn") throw Error("--at lisn needs a scenario (the coupling network and LISN); a capture file alone has none");
  if (point != "source" && point != "current") throw Error("expected --at source or current, found \"" + point + "\"");
  return point;
}

std::string scenario_point(const std::string& at) {
  const std::string point = at.empty() ? "lisn" : at;
  if (point != "source" && point != "current" && point != "lisn") {
    throw Error("expected --at source, current or lisn, found \"" + point + "\"");
  }
  return point;
}

SpectrumResult capture_spectrum(const CaptureSpec& spec, const std::string& at, const SpectrumSettings& settings) {
  const std::string point = capture_point(at);
  CaptureWithPlan loaded(spec, settings.threads);
  return sampled_result(loaded.take_capture(), loaded.planner(), settings, settings.fundamental_hz,
                        settings.max_frequency_hz, point, nullptr);
}

SpectrumResult scenario_spectrum(const Scenario& scenario, const std::string& at, const SpectrumSettings& settings) {
  const std::string point = scenario_point(at);
  if (scenario.capture) {
    CaptureSpec spec = *scenario.capture;
    if (settings.resample) spec.resample = true;
    std::optional<double> f0_hz = settings.fundamental_hz;
    if (!f0_hz) f0_hz = spec.switching_frequency_hz;
    CaptureWithPlan loaded(spec, settings.threads);
    std::optional<Capture> current;
    if (spec.current_column && point != "source") current = load_capture(current_capture_spec(spec));
    return sampled_result(loaded.take_capture(), loaded.planner(), settings, f0_hz, settings.max_frequency_hz, point, &scenario,
                          std::move(current));
  }
  if (scenario.switching) return described_result(scenario, point, settings.max_frequency_hz);
  throw Error(SourcePosition{scenario.file, 0, 0}, "expected a [switching] or [capture] section");
}

}  // namespace spurcast

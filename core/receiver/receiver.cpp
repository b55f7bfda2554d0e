#include "core/receiver/receiver.hpp"

#include <fftw3.h>

#include <algorithm>
#include <cmath>
#include <exception>
#include <mutex>
#include <numbers>
#include <thread>
#include <utility>

#include "core/input/error.hpp"
#include "core/source/fftw_lock.hpp"
#include "core/source/spectrum.hpp"

namespace spurcast {

std::string to_string(CisprBand band) {
  switch (band) {
    case CisprBand::A: return "A";
    case CisprBand::B: return "B";
    case CisprBand::C: return "C";
    case CisprBand::D: return "D";
  }
  return "B";
}

std::optional<CisprBand> find_band(std::string_view name) {
  for (CisprBand band : {CisprBand::A, CisprBand::B, CisprBand::C, CisprBand::D}) {
    if (to_string(band) == name) return band;
  }
  return std::nullopt;
}

CisprBand band_from_string(std::string_view name) {
  if (auto band = find_band(name)) return *band;
  throw Error("expected one of A, B, C or D, found \"" + std::string(name) + "\"");
}

BandParameters band_parameters(CisprBand band) {
  // CISPR 16-1-1 bands, 6 dB bandwidths and QP/meter time constants: docs/references.md §1.1 (from
  // memory; a public encyclopedia mirror and an analyser manual agree).
  switch (band) {
    case CisprBand::A: return {CisprBand::A, 9e3, 150e3, 200.0, {45e-3, 500e-3, 160e-3}};
    case CisprBand::B: return {CisprBand::B, 150e3, 30e6, 9e3, {1e-3, 160e-3, 160e-3}};
    case CisprBand::C: return {CisprBand::C, 30e6, 300e6, 120e3, {1e-3, 550e-3, 100e-3}};
    case CisprBand::D: return {CisprBand::D, 300e6, 1e9, 120e3, {1e-3, 550e-3, 100e-3}};
  }
  return band_parameters(CisprBand::B);
}

CisprBand band_for_frequency(double frequency_hz) {
  for (CisprBand band : {CisprBand::A, CisprBand::B, CisprBand::C, CisprBand::D}) {
    const BandParameters p = band_parameters(band);
    if (frequency_hz >= p.start_hz && frequency_hz <= p.stop_hz) return band;
  }
  throw Error("frequency " + format_quantity(frequency_hz, Dimension::frequency) +
              " is outside the CISPR bands (9 kHz-1 GHz)");
}

namespace {

// The range a [receiver] noise_floor may take [dBµV]: beyond it the value is surely a typing error
// (a real receiver's floor lies near −30..+10 dBµV in the CISPR bands; judgement).
constexpr double min_noise_floor_dbuv = -60.0;
constexpr double max_noise_floor_dbuv = 60.0;

void check_step(const TableReader& reader, std::string_view key, double step_hz, CisprBand band) {
  if (const auto problem = step_problem(band, step_hz)) reader.fail(key, *problem);
}

// Reads an array of names one element at a time, so that a wrong name points at its own position.
template <typename T, typename Find>
std::vector<T> read_name_array(TableReader& reader, std::string_view key, Find find,
                               const std::string& choices) {
  const toml::node* node = reader.node(key);
  std::vector<T> items;
  auto take = [&](const toml::node& element) {
    const auto* text = element.as_string();
    if (text == nullptr) {
      throw Error(position_of(element, reader.file()), "expected a string, found a non-string value");
    }
    const auto found = find(text->get());
    if (!found) {
      throw Error(position_of(element, reader.file()),
                  "expected one of " + choices + ", found \"" + text->get() + "\"");
    }
    if (std::find(items.begin(), items.end(), *found) == items.end()) items.push_back(*found);
  };
  if (const auto* array = node->as_array()) {
    for (const toml::node& element : *array) take(element);
    if (items.empty()) reader.fail(key, "expected at least one entry, found an empty array");
  } else {
    take(*node);  // a lone string is a list of one
  }
  return items;
}

}  // namespace

ReceiverSpec read_receiver_section(TableReader& reader) {
  ReceiverSpec spec;
  if (reader.has("bands")) {
    spec.bands = read_name_array<CisprBand>(reader, "bands", find_band, "A, B, C or D");
  }
  if (reader.has("detectors")) {
    spec.detectors = read_name_array<Detector>(reader, "detectors", find_detector,
                                                "peak, quasi-peak or average");
  }
  spec.step_hz = reader.optional_quantity("step", Dimension::frequency);
  if (spec.step_hz) {
    for (CisprBand band : spec.bands) check_step(reader, "step", *spec.step_hz, band);
  }
  spec.noise_floor_dbuv = reader.optional_quantity("noise_floor", Dimension::level_dbuv);
  if (spec.noise_floor_dbuv && !(*spec.noise_floor_dbuv >= min_noise_floor_dbuv && *spec.noise_floor_dbuv <= max_noise_floor_dbuv)) {
    reader.fail("noise_floor", "expected a noise floor from " + format_quantity(min_noise_floor_dbuv, Dimension::level_dbuv) +
                                   " to " + format_quantity(max_noise_floor_dbuv, Dimension::level_dbuv) + ", found " +
                                   format_quantity(*spec.noise_floor_dbuv, Dimension::level_dbuv));
  }
  reader.finish({"bands", "detectors", "step", "noise_floor"});
  return spec;
}

double default_noise_floor_dbuv(CisprBand band) {
  // k·T0 = −174 dBm/Hz (T0 = 290 K); 0 dBm at 50 Ω is 107.0 dBµV; in the noise bandwidth of the
  // Gaussian IF; plus the noise figure (judgement, a receiver without preamplifier).
  constexpr double kt0_dbm_per_hz = -174.0;
  constexpr double dbm_to_dbuv_50ohm = 106.99;  // 1 mW into 50 Ω: √(0.05 W·Ω) = 0.2236 V = 106.99 dBµV
  constexpr double noise_figure_db = 20.0;      // judgement
  return kt0_dbm_per_hz + dbm_to_dbuv_50ohm + 10.0 * std::log10(noise_bandwidth_hz(band_parameters(band).bandwidth_6db_hz)) +
         noise_figure_db;
}

bool at_noise_floor(double level_db, const std::optional<double>& noise_floor_db) {
  return noise_floor_db && level_db <= *noise_floor_db + 1e-9;
}

void apply_noise_floor(ScanResult& result, double noise_floor_db) {
  result.noise_floor_db = noise_floor_db;
  for (Reading& r : result.readings) {
    r.peak_db = std::max(r.peak_db, noise_floor_db);
    r.quasi_peak_db = std::max(r.quasi_peak_db, noise_floor_db);
    r.average_db = std::max(r.average_db, noise_floor_db);
  }
}

double if_gain(double offset_hz, double bandwidth_6db_hz) {
  const double x = offset_hz / bandwidth_6db_hz;
  return std::exp(-4.0 * std::numbers::ln2 * x * x);
}

double impulse_bandwidth_hz(double bandwidth_6db_hz) {
  // B_imp = ∫|H| df / |H(0)| for the Gaussian exp(-a f²), a = 4 ln2 / B6²: sqrt(pi/a).
  return std::sqrt(std::numbers::pi / (4.0 * std::numbers::ln2)) * bandwidth_6db_hz;
}

double noise_bandwidth_hz(double bandwidth_6db_hz) {
  // ENBW = ∫|H|² df = sqrt(pi/(2a)).
  return std::sqrt(std::numbers::pi / (8.0 * std::numbers::ln2)) * bandwidth_6db_hz;
}

double default_step_hz(CisprBand band) { return band_parameters(band).bandwidth_6db_hz / 4.0; }

std::optional<std::string> step_problem(CisprBand band, double step_hz) {
  const BandParameters p = band_parameters(band);
  if (!(step_hz > 0.0)) return "expected a positive step, found " + format_quantity(step_hz, Dimension::frequency);
  if (step_hz > 0.5 * p.bandwidth_6db_hz * (1.0 + 1e-9)) {
    return "expected a step of at most " + format_quantity(0.5 * p.bandwidth_6db_hz, Dimension::frequency) +
           " (half the " + format_quantity(p.bandwidth_6db_hz, Dimension::frequency) + " bandwidth of band " +
           to_string(band) + "), found " + format_quantity(step_hz, Dimension::frequency);
  }
  // Counted before the grid is allocated: k = 0 .. floor(span/step), as tuned_frequencies() makes it.
  const double span_hz = p.stop_hz * (1.0 + 1e-9) - p.start_hz;
  if (std::floor(span_hz / step_hz) + 1.0 > static_cast<double>(max_tuned_frequencies)) {
    return "expected a step of at least " +
           format_quantity((p.stop_hz - p.start_hz) / static_cast<double>(max_tuned_frequencies - 1), Dimension::frequency) +
           " in band " + to_string(band) + " (" + format_quantity(p.start_hz, Dimension::frequency) + "-" +
           format_quantity(p.stop_hz, Dimension::frequency) + ": at most " + std::to_string(max_tuned_frequencies) +
           " tuned frequencies), found " + format_quantity(step_hz, Dimension::frequency);
  }
  return std::nullopt;
}

std::vector<double> tuned_frequencies(CisprBand band, double step_hz) {
  const BandParameters p = band_parameters(band);
  if (const auto problem = step_problem(band, step_hz)) throw Error(*problem);
  std::vector<double> frequencies;
  const double slack = 1e-9 * p.stop_hz;
  for (std::size_t k = 0;; ++k) {
    const double f = p.start_hz + static_cast<double>(k) * step_hz;
    if (f > p.stop_hz + slack) break;
    frequencies.push_back(f);
  }
  return frequencies;
}

double Reading::level_db(Detector detector) const {
  switch (detector) {
    case Detector::peak: return peak_db;
    case Detector::quasi_peak: return quasi_peak_db;
    case Detector::average: return average_db;
  }
  return peak_db;
}

std::vector<double> plan_frequencies(const ScanPlan& plan) {
  const BandParameters p = band_parameters(plan.band);
  if (plan.frequencies_hz.empty()) {
    const double step = plan.step_hz.value_or(default_step_hz(plan.band));
    if (const auto problem = step_problem(plan.band, step)) {
      throw Error(plan.step_origin.empty() ? *problem : plan.step_origin + ": " + *problem);
    }
    return tuned_frequencies(plan.band, step);
  }
  std::vector<double> frequencies = plan.frequencies_hz;
  std::sort(frequencies.begin(), frequencies.end());
  for (double f : frequencies) {
    if (!(f >= p.start_hz * (1.0 - 1e-9) && f <= p.stop_hz * (1.0 + 1e-9))) {
      throw Error("frequency " + format_quantity(f, Dimension::frequency) + " is outside band " +
                  to_string(plan.band) + " (" + format_quantity(p.start_hz, Dimension::frequency) + "-" +
                  format_quantity(p.stop_hz, Dimension::frequency) + ")");
    }
  }
  return frequencies;
}

namespace {

// The IF response is truncated at ±2·B6 from the tuned frequency, where the Gaussian is
// exp(−16·ln2) = −96 dB: far below any reading that matters next to the in-band signal.
constexpr double span_bandwidths = 2.0;
// Envelope samples per 6 dB bandwidth (decimated complex baseband at 5·B6, above the 4·B6 width
// of the truncated IF response, so no aliasing): the pulse tests show 5 per bandwidth agree with
// 40 within 0.02 dB on PK, QP and AV wherever the pulse falls between samples
// (tests/receiver/detector_test.cpp); 4 per bandwidth errs by 0.12 dB on QP at 1 kHz PRF.
constexpr double envelope_samples_per_bandwidth = 5.0;

// The smallest n' >= n whose factors are 2, 3 and 5 (fast FFTW sizes).
std::size_t fast_fft_size(std::size_t n) {
  for (std::size_t m = std::max<std::size_t>(n, 1);; ++m) {
    std::size_t r = m;
    for (std::size_t f : {2u, 3u, 5u}) {
      while (r % f == 0) r /= f;
    }
    if (r == 1) return m;
  }
}

struct FftwBuffer {
  explicit FftwBuffer(std::size_t n)
      : data(static_cast<fftw_complex*>(fftw_malloc(sizeof(fftw_complex) * std::max<std::size_t>(n, 1)))), size(n) {
    if (data == nullptr) throw Error("out of memory for an FFT of " + std::to_string(n) + " points");
  }
  ~FftwBuffer() { fftw_free(data); }
  FftwBuffer(const FftwBuffer&) = delete;
  FftwBuffer& operator=(const FftwBuffer&) = delete;
  fftw_complex* data;
  std::size_t size;
};

// A plan made and destroyed under the process-wide planner lock (core/source/fftw_lock.hpp).
struct FftwPlan {
  template <typename Make>
  explicit FftwPlan(Make make) {
    const std::lock_guard<std::mutex> lock(fftw_planner_mutex());
    plan = make();
    if (plan == nullptr) throw Error("cannot plan an FFT");
  }
  ~FftwPlan() {
    const std::lock_guard<std::mutex> lock(fftw_planner_mutex());
    fftw_destroy_plan(plan);
  }
  FftwPlan(const FftwPlan&) = delete;
  FftwPlan& operator=(const FftwPlan&) = delete;
  fftw_plan plan = nullptr;
};

/// The thread count a plan asks for (0 = every hardware thread), at most 64.
std::size_t thread_count(unsigned requested) {
  return std::clamp<std::size_t>(requested != 0 ? requested : std::thread::hardware_concurrency(), 1, 64);
}

// Runs body(begin, end) over [0, count) split into contiguous chunks, one per thread.
template <typename Body>
void parallel_chunks(std::size_t threads, std::size_t count, Body body) {
  const std::size_t used = std::min(threads, std::max<std::size_t>(1, count / 8));
  if (used <= 1) {
    body(std::size_t{0}, count);
    return;
  }
  std::vector<std::thread> workers;
  std::vector<std::exception_ptr> errors(used);
  for (std::size_t t = 0; t < used; ++t) {
    workers.emplace_back([&, t] {
      try {
        body(count * t / used, count * (t + 1) / used);
      } catch (...) {
        errors[t] = std::current_exception();
      }
    });
  }
  for (std::thread& worker : workers) worker.join();
  for (const std::exception_ptr& error : errors) {
    if (error) std::rethrow_exception(error);
  }
}

double level_db(double rms) { return rms > 0.0 ? volts_to_dbuv(rms) : level_floor_db; }  // dBµA alike

Reading make_reading(double frequency_hz, const DetectorReadings& r) {
  return Reading{frequency_hz, level_db(r.peak), level_db(r.quasi_peak), level_db(r.average)};
}

// The periodic complex baseband of the IF output from its spectral lines: `phasors[i]` (peak
// complex amplitude of a cosine, already weighted by the IF response) at offset (first + i)
// line spacings from a reference; envelope = |inverse DFT| over one period, M = buffer.size points.
// Uses a pre-made backward plan of that size (fftw_execute_dft is thread-safe).
void envelope_from_lines(const fftw_plan plan, FftwBuffer& buffer, const std::vector<std::complex<double>>& phasors,
                         std::vector<double>& envelope) {
  const std::size_t m = buffer.size;
  for (std::size_t i = 0; i < m; ++i) buffer.data[i][0] = buffer.data[i][1] = 0.0;
  for (std::size_t i = 0; i < phasors.size(); ++i) {
    buffer.data[i % m][0] += phasors[i].real();
    buffer.data[i % m][1] += phasors[i].imag();
  }
  fftw_execute_dft(plan, buffer.data, buffer.data);
  envelope.resize(m);
  for (std::size_t i = 0; i < m; ++i) {
    envelope[i] = std::sqrt(buffer.data[i][0] * buffer.data[i][0] + buffer.data[i][1] * buffer.data[i][1]);
  }
}

// The bins of a record's spectrum the receiver reads: scale·X[k] (scale = 2/N) is the peak
// complex amplitude of a cosine on bin k; bin 0 (DC) is never read.
struct RecordSpectrum {
  const SampledSpectrum& held;
  double bin_hz = 0.0;
  double period_s = 0.0;
  double scale = 0.0;
};

RecordSpectrum record_view(const SampledSpectrum& spectrum) {
  return {spectrum, spectrum.bin_hz(), spectrum.duration_s(), 2.0 / static_cast<double>(spectrum.record_samples)};
}

// The bin range [first, last] within ±2·B6 of `tuned_hz` (clipped to the available bins).
std::pair<long long, long long> span_indices(double tuned_hz, double bandwidth_6db_hz, double spacing_hz,
                                             long long min_index, long long max_index) {
  const double half_span = span_bandwidths * bandwidth_6db_hz;
  const auto first = std::max(min_index, static_cast<long long>(std::ceil((tuned_hz - half_span) / spacing_hz)));
  const auto last = std::min(max_index, static_cast<long long>(std::floor((tuned_hz + half_span) / spacing_hz)));
  return {first, last};
}

std::size_t envelope_points(double period_s, double spacing_hz, double bandwidth_6db_hz) {
  const auto span_lines = static_cast<std::size_t>(std::floor(2.0 * span_bandwidths * bandwidth_6db_hz / spacing_hz)) + 1;
  const auto by_rate = static_cast<std::size_t>(std::ceil(envelope_samples_per_bandwidth * bandwidth_6db_hz * period_s));
  return fast_fft_size(std::max({span_lines, by_rate, std::size_t{16}}));
}

void check_sample_rate(double sample_rate_hz, CisprBand band, double max_tuned_hz, double bandwidth_6db_hz) {
  const double needed_hz = 2.0 * (max_tuned_hz + span_bandwidths * bandwidth_6db_hz);
  if (sample_rate_hz <= needed_hz) {
    throw Error("band " + to_string(band) + " cannot be computed from this record: tuning up to " +
                format_quantity(max_tuned_hz, Dimension::frequency) + " needs a sample rate above " +
                format_quantity(needed_hz, Dimension::frequency) + " (twice the tuned frequency plus the IF span), found " +
                format_quantity(sample_rate_hz, Dimension::frequency));
  }
}

/// Error unless `spectrum` holds every bin that tuned frequencies from low_tuned_hz to
/// high_tuned_hz read (their IF span, ±2·B6, without DC).
void check_spectrum_covers(const SampledSpectrum& spectrum, double low_tuned_hz, double high_tuned_hz,
                           double bandwidth_6db_hz) {
  const double half_span = span_bandwidths * bandwidth_6db_hz;
  const double bin_hz = spectrum.bin_hz();
  const auto top = static_cast<long long>(spectrum.record_samples / 2);
  const long long first = std::max(1LL, static_cast<long long>(std::ceil((low_tuned_hz - half_span) / bin_hz)));
  const long long last = std::min(top, static_cast<long long>(std::floor((high_tuned_hz + half_span) / bin_hz)));
  const auto held_first = std::max(1LL, static_cast<long long>(spectrum.first_bin));
  const auto held_last = static_cast<long long>(spectrum.end_bin()) - 1;
  if (first < held_first || last > held_last) {
    throw Error("expected the record's spectrum from " + format_quantity(static_cast<double>(first) * bin_hz, Dimension::frequency) +
                " to " + format_quantity(static_cast<double>(last) * bin_hz, Dimension::frequency) + ", found " +
                format_quantity(static_cast<double>(held_first) * bin_hz, Dimension::frequency) + " to " +
                format_quantity(static_cast<double>(held_last) * bin_hz, Dimension::frequency));
  }
}

struct WaveformEnvelopeWork {
  const RecordSpectrum& spectrum;
  double bandwidth_6db_hz;
  fftw_plan plan;
  std::size_t points;
};

void waveform_envelope_at(const WaveformEnvelopeWork& work, double tuned_hz, FftwBuffer& buffer,
                          std::vector<std::complex<double>>& phasors, std::vector<double>& envelope) {
  const RecordSpectrum& s = work.spectrum;
  const auto [first, last] = span_indices(tuned_hz, work.bandwidth_6db_hz, s.bin_hz,
                                          std::max(1LL, static_cast<long long>(s.held.first_bin)),
                                          static_cast<long long>(s.held.end_bin()) - 1);
  phasors.clear();
  // Gaussian gains on the bin grid by recurrence: with x_j = x_0 + j·Δ,
  // exp(−a·x_{j+1}²) = exp(−a·x_j²)·q_j, q_j = exp(−a·(2·x_j·Δ + Δ²)), q_{j+1} = q_j·exp(−2·a·Δ²).
  const double a = 4.0 * std::numbers::ln2 / (work.bandwidth_6db_hz * work.bandwidth_6db_hz);
  const double x0 = static_cast<double>(first) * s.bin_hz - tuned_hz;
  const double delta = s.bin_hz;
  double gain = s.scale * std::exp(-a * x0 * x0);
  double ratio = std::exp(-a * (2.0 * x0 * delta + delta * delta));
  const double ratio_step = std::exp(-2.0 * a * delta * delta);
  for (long long k = first; k <= last; ++k) {
    phasors.push_back(s.held.bins[static_cast<std::size_t>(k) - s.held.first_bin] * gain);
    gain *= ratio;
    ratio *= ratio_step;
  }
  envelope_from_lines(work.plan, buffer, phasors, envelope);
}

/// The last line of defence for finite levels: inputs are bounded where they are read (e.g.
/// max_amplitude_v), but a reading that still overflows, or is NaN, is an error here rather than
/// an "inf" in a CSV, a null in JSON or a plot axis without end (issue 14).
void require_finite_readings(const ScanResult& result) {
  for (const Reading& r : result.readings) {
    if (std::isfinite(r.peak_db) && std::isfinite(r.quasi_peak_db) && std::isfinite(r.average_db)) continue;
    throw Error("the reading at " + format_quantity(r.frequency_hz, Dimension::frequency) +
                " is not a finite level (the inputs overflow the calculation): check the amplitudes, currents and "
                "component values");
  }
}

/// A result with the plan's band, bandwidth and step filled in and no readings yet.
ScanResult empty_scan_result(Quantity quantity, const ScanPlan& plan) {
  ScanResult result;
  result.quantity = quantity;
  result.band = plan.band;
  result.bandwidth_6db_hz = band_parameters(plan.band).bandwidth_6db_hz;
  result.step_hz = plan.frequencies_hz.empty() ? plan.step_hz.value_or(default_step_hz(plan.band)) : 0.0;
  return result;
}

}  // namespace

Envelope waveform_envelope(const Waveform& waveform, double tuned_hz, double bandwidth_6db_hz) {
  check_sample_rate(waveform.sample_rate_hz, band_for_frequency(tuned_hz), tuned_hz, bandwidth_6db_hz);
  FftPlanner planner;
  const SampledSpectrum held = sampled_spectrum(waveform, std::max(0.0, tuned_hz - span_bandwidths * bandwidth_6db_hz),
                                                tuned_hz + span_bandwidths * bandwidth_6db_hz, planner);
  const RecordSpectrum spectrum = record_view(held);
  const std::size_t m = envelope_points(spectrum.period_s, spectrum.bin_hz, bandwidth_6db_hz);
  FftwBuffer buffer(m);
  const FftwPlan plan([&] { return fftw_plan_dft_1d(static_cast<int>(m), buffer.data, buffer.data, FFTW_BACKWARD, FFTW_ESTIMATE); });
  std::vector<std::complex<double>> phasors;
  Envelope envelope;
  waveform_envelope_at(WaveformEnvelopeWork{spectrum, bandwidth_6db_hz, plan.plan, m}, tuned_hz, buffer, phasors,
                       envelope.samples);
  envelope.sample_interval_s = spectrum.period_s / static_cast<double>(m);
  return envelope;
}

namespace {

/// The tuned frequencies of `plan` that a record at `sample_rate_hz` covers, and the result they
/// go into. A band scan of a record sampled too slowly for the whole band (a capture, typically)
/// reads the tuned frequencies the record covers and says where it stopped; spot readings must all
/// be covered. With `result`, also the notes and the checks of scan_waveform().
std::vector<double> covered_frequencies(const ScanPlan& plan, double sample_rate_hz, ScanResult* result) {
  const BandParameters band = band_parameters(plan.band);
  std::vector<double> frequencies = plan_frequencies(plan);
  if (frequencies.empty()) return frequencies;
  const double highest_covered_hz = 0.5 * sample_rate_hz - span_bandwidths * band.bandwidth_6db_hz;
  if (plan.frequencies_hz.empty() && frequencies.back() >= highest_covered_hz && frequencies.front() < highest_covered_hz) {
    while (frequencies.back() >= highest_covered_hz) frequencies.pop_back();
    if (result != nullptr) {
      result->read_up_to_hz = frequencies.back();
      result->unread_reason = "the record's sample rate (" + format_quantity(sample_rate_hz, Dimension::frequency) +
                              ") covers tuned frequencies up to " + format_quantity(frequencies.back(), Dimension::frequency) +
                              " only (the tuned frequency plus the IF span must stay under half the sample rate)";
      result->notes.push_back("tuned frequencies above " + format_quantity(frequencies.back(), Dimension::frequency) +
                              " not read: the record's sample rate (" +
                              format_quantity(sample_rate_hz, Dimension::frequency) + ") does not cover them");
    }
  }
  return frequencies;
}

/// The checks of a sampled scan before any transform: the sample rate covers the tuned frequencies,
/// the record resolves the IF bandwidth (or holds whole periods), at least 2 samples.
void check_sampled_scan(const ScanPlan& plan, const std::vector<double>& frequencies, double sample_rate_hz,
                        std::size_t samples) {
  const BandParameters band = band_parameters(plan.band);
  check_sample_rate(sample_rate_hz, plan.band, frequencies.back(), band.bandwidth_6db_hz);
  // A record shorter than the IF filter's 1/B6 cannot resolve the bandwidth, unless it holds whole
  // periods of a periodic signal (then every line sits on a bin and the reading is exact).
  const double duration_s = static_cast<double>(samples) / sample_rate_hz;
  if (!plan.periodic_record && duration_s < 1.0 / band.bandwidth_6db_hz) {
    throw Error("record of " + format_quantity(duration_s, Dimension::time) + " is shorter than 1/RBW = " +
                format_quantity(1.0 / band.bandwidth_6db_hz, Dimension::time) + " of band " + to_string(plan.band) +
                " (" + format_quantity(band.bandwidth_6db_hz, Dimension::frequency) +
                "): record longer, or state the switching frequency to treat the record as whole periods");
  }
  if (samples < 2) throw Error("expected a record of at least 2 samples, found " + std::to_string(samples));
}

/// The readings of the checked tuned frequencies from the record's spectrum.
ScanResult read_spectrum(const SampledSpectrum& held, const ScanPlan& plan, const std::vector<double>& frequencies,
                         ScanResult result) {
  const BandParameters band = band_parameters(plan.band);
  const RecordSpectrum spectrum = record_view(held);
  const std::size_t m = envelope_points(spectrum.period_s, spectrum.bin_hz, band.bandwidth_6db_hz);
  const double envelope_interval_s = spectrum.period_s / static_cast<double>(m);
  const DetectorModel model = make_detector_model(band.detector);
  FftwBuffer plan_buffer(m);
  const FftwPlan backward([&] {
    return fftw_plan_dft_1d(static_cast<int>(m), plan_buffer.data, plan_buffer.data, FFTW_BACKWARD, FFTW_ESTIMATE);
  });
  const WaveformEnvelopeWork work{spectrum, band.bandwidth_6db_hz, backward.plan, m};

  result.readings.resize(frequencies.size());
  parallel_chunks(thread_count(plan.threads), frequencies.size(), [&](std::size_t begin, std::size_t end) {
    FftwBuffer buffer(m);
    std::vector<std::complex<double>> phasors;
    std::vector<double> envelope;
    for (std::size_t i = begin; i < end; ++i) {
      waveform_envelope_at(work, frequencies[i], buffer, phasors, envelope);
      result.readings[i] = make_reading(frequencies[i], read_periodic_envelope(envelope, envelope_interval_s, model));
    }
  });

  result.notes.push_back("record of " + format_quantity(spectrum.period_s, Dimension::time) +
                         " treated as periodic: detectors read in steady state with the record repeated");
  if (spectrum.period_s * band.bandwidth_6db_hz < 4.0) {
    result.notes.push_back("the record is shorter than the IF impulse response (4/B6 = " +
                           format_quantity(4.0 / band.bandwidth_6db_hz, Dimension::time) +
                           "): the readings are those of the record repeated without end");
  }
  if (plan.slowest_modulation_hz > 0.0 && spectrum.period_s * plan.slowest_modulation_hz < 3.0) {
    result.notes.push_back("record holds " + format_quantity(spectrum.period_s * plan.slowest_modulation_hz, Dimension::number, 3) +
                           " periods of the slowest modulation (" +
                           format_quantity(plan.slowest_modulation_hz, Dimension::frequency) +
                           "); fewer than 3 may misrepresent it");
  }
  require_finite_readings(result);
  if (plan.noise_floor_db) apply_noise_floor(result, *plan.noise_floor_db);
  return result;
}

}  // namespace

std::pair<double, double> scan_span_hz(const ScanPlan& plan, double sample_rate_hz) {
  const std::vector<double> frequencies = covered_frequencies(plan, sample_rate_hz, nullptr);
  const double half_span = span_bandwidths * band_parameters(plan.band).bandwidth_6db_hz;
  // None read, or the rate covers none (the scan then stops at check_sample_rate's error).
  if (frequencies.empty() || 2.0 * (frequencies.back() + half_span) >= sample_rate_hz) return {0.0, 0.0};
  return {std::max(0.0, frequencies.front() - half_span), frequencies.back() + half_span};
}

std::pair<double, double> scan_span_hz(const std::vector<ScanPlan>& plans, double sample_rate_hz) {
  std::pair<double, double> span{0.0, 0.0};
  for (const ScanPlan& plan : plans) {
    const auto [low_hz, high_hz] = scan_span_hz(plan, sample_rate_hz);
    if (high_hz <= 0.0) continue;
    span.first = span.second > 0.0 ? std::min(span.first, low_hz) : low_hz;
    span.second = std::max(span.second, high_hz);
  }
  return span;
}

ScanResult scan_waveform(const Waveform& waveform, const ScanPlan& plan) {
  ScanResult result = empty_scan_result(waveform.quantity, plan);
  const std::vector<double> frequencies = covered_frequencies(plan, waveform.sample_rate_hz, &result);
  if (frequencies.empty()) return result;
  check_sampled_scan(plan, frequencies, waveform.sample_rate_hz, waveform.samples.size());
  // Only the bins the tuned frequencies read are kept (scan_span_hz).
  const auto [low_hz, high_hz] = scan_span_hz(plan, waveform.sample_rate_hz);
  FftPlanner planner;
  const SampledSpectrum spectrum =
      sampled_spectrum(waveform, low_hz, high_hz, planner, static_cast<unsigned>(thread_count(plan.threads)));
  return read_spectrum(spectrum, plan, frequencies, std::move(result));
}

ScanResult scan_spectrum(const SampledSpectrum& spectrum, const ScanPlan& plan) {
  ScanResult result = empty_scan_result(spectrum.quantity, plan);
  const std::vector<double> frequencies = covered_frequencies(plan, spectrum.sample_rate_hz, &result);
  if (frequencies.empty()) return result;
  check_sampled_scan(plan, frequencies, spectrum.sample_rate_hz, spectrum.record_samples);
  check_spectrum_covers(spectrum, frequencies.front(), frequencies.back(), band_parameters(plan.band).bandwidth_6db_hz);
  return read_spectrum(spectrum, plan, frequencies, std::move(result));
}

ScanResult scan_lines(const LineSpectrum& lines, const ScanPlan& plan) {
  if (!(lines.fundamental_hz > 0.0)) throw Error("expected a positive fundamental frequency");
  const BandParameters band = band_parameters(plan.band);
  const std::vector<double> frequencies = plan_frequencies(plan);
  ScanResult result = empty_scan_result(lines.quantity, plan);
  if (frequencies.empty()) return result;

  const double f0 = lines.fundamental_hz;
  const double period_s = 1.0 / f0;
  // The detectors read the envelope at m points per period; the peak, with envelope_oversampling,
  // at `oversampling`·m (whose every oversampling-th sample is the m-point envelope: the same lines
  // zero-padded further).
  const std::size_t m = envelope_points(period_s, f0, band.bandwidth_6db_hz);
  const std::size_t oversampling = std::max(1u, plan.envelope_oversampling);
  const std::size_t m_fine = m * oversampling;
  const double envelope_interval_s = period_s / static_cast<double>(m);
  const DetectorModel model = make_detector_model(band.detector);
  FftwBuffer plan_buffer(m_fine);
  const FftwPlan backward([&] {
    return fftw_plan_dft_1d(static_cast<int>(m_fine), plan_buffer.data, plan_buffer.data, FFTW_BACKWARD, FFTW_ESTIMATE);
  });
  const auto harmonic_count = static_cast<long long>(lines.harmonics.size());

  result.readings.resize(frequencies.size());
  parallel_chunks(thread_count(plan.threads), frequencies.size(), [&](std::size_t begin, std::size_t end) {
    FftwBuffer buffer(m_fine);
    std::vector<std::complex<double>> phasors;
    std::vector<double> envelope;
    std::vector<double> coarse;
    for (std::size_t i = begin; i < end; ++i) {
      const double tuned_hz = frequencies[i];
      const auto [first, last] = span_indices(tuned_hz, band.bandwidth_6db_hz, f0, 1, harmonic_count);
      phasors.clear();
      std::size_t nonzero = 0;
      double single_peak = 0.0;
      for (long long k = first; k <= last; ++k) {
        // Peak phasor of harmonic k (√2 × RMS) through the IF response.
        const std::complex<double> phasor = std::numbers::sqrt2 * lines.harmonics[static_cast<std::size_t>(k - 1)] *
                                            if_gain(static_cast<double>(k) * f0 - tuned_hz, band.bandwidth_6db_hz);
        if (const double power = std::norm(phasor); power > 0.0) {  // |phasor|² without hypot's care
          ++nonzero;
          single_peak = std::sqrt(power);
        }
        phasors.push_back(phasor);
      }
      DetectorReadings r;
      if (nonzero == 1) {
        // One line: a constant envelope, which every detector reads as its RMS (calibration).
        r.peak = r.quasi_peak = r.average = single_peak / std::numbers::sqrt2;
      } else if (nonzero > 1) {
        envelope_from_lines(backward.plan, buffer, phasors, envelope);
        if (oversampling == 1) {
          r = read_periodic_envelope(envelope, envelope_interval_s, model);
        } else {
          coarse.resize(m);
          for (std::size_t j = 0; j < m; ++j) coarse[j] = envelope[j * oversampling];
          r = read_periodic_envelope(coarse, envelope_interval_s, model);
          r.peak = periodic_envelope_peak(envelope);
        }
      }
      result.readings[i] = make_reading(tuned_hz, r);
    }
  });
  require_finite_readings(result);
  if (plan.noise_floor_db) apply_noise_floor(result, *plan.noise_floor_db);
  return result;
}

std::string to_string(ModulatedReading reading) {
  switch (reading) {
    case ModulatedReading::sidebands: return "sidebands";
    case ModulatedReading::quasi_static: return "quasi-static";
    case ModulatedReading::several_harmonics: return "several harmonics";
    case ModulatedReading::swept: return "swept";
  }
  return "sidebands";
}

ModulatedReading modulated_reading(double fundamental_hz, double modulation_period_s, CisprBand band) {
  const double b6 = band_parameters(band).bandwidth_6db_hz;
  if (fundamental_hz <= 2.0 * span_bandwidths * b6) return ModulatedReading::several_harmonics;
  if (2.0 * span_bandwidths * b6 * modulation_period_s <= max_sideband_lines) return ModulatedReading::sidebands;
  return ModulatedReading::quasi_static;
}

SweptGain swept_if_gain(double start_offset_hz, double end_offset_hz, double duration_s, double bandwidth_6db_hz) {
  const double a = 4.0 * std::numbers::ln2 / (bandwidth_6db_hz * bandwidth_6db_hz);  // |H| = exp(−a·u²)
  const double width_hz = end_offset_hz - start_offset_hz;
  const double x = duration_s > 0.0 ? a * std::abs(width_hz) / (duration_s * std::numbers::pi) : 0.0;
  const double widening = 1.0 + x * x;
  const double swept_a = a / widening;             // the response widened by √(1 + x²)
  const double height = 1.0 / std::sqrt(std::sqrt(widening));  // and lowered by (1 + x²)^(−1/4)
  SweptGain gain;
  const double nearest_hz = start_offset_hz * end_offset_hz <= 0.0
                                ? 0.0
                                : std::min(std::abs(start_offset_hz), std::abs(end_offset_hz));
  gain.highest = height * std::exp(-swept_a * nearest_hz * nearest_hz);
  if (gain.highest < negligible_swept_gain) return gain;  // mean ≤ highest: taken as 0
  const double root = std::sqrt(swept_a);
  if (std::abs(width_hz) * root < 1e-6) {
    // No sweep to speak of: the gain at the middle of the interval.
    const double middle_hz = 0.5 * (start_offset_hz + end_offset_hz);
    gain.mean = height * std::exp(-swept_a * middle_hz * middle_hz);
  } else {
    // ∫ exp(−a'·u²) du over [u0, u1] / (u1 − u0) = √π/(2√a')·(erf(√a'·u1) − erf(√a'·u0))/(u1 − u0);
    // where both ends lie on the same side the difference is taken of erfc, which keeps its digits.
    const double u0 = std::min(start_offset_hz, end_offset_hz) * root;
    const double u1 = std::max(start_offset_hz, end_offset_hz) * root;
    double difference = 0.0;
    if (u0 >= 0.0) {
      difference = std::erfc(u0) - std::erfc(u1);
    } else if (u1 <= 0.0) {
      difference = std::erfc(-u1) - std::erfc(-u0);
    } else {
      difference = std::erf(u1) - std::erf(u0);
    }
    gain.mean = height * 0.5 * std::sqrt(std::numbers::pi) * difference / (u1 - u0);
  }
  return gain;
}

namespace {

/// scan_modulated_lines for lines whose fundamental varies over the instants (the method in
/// receiver.hpp, ModulatedReading::swept).
void read_swept_lines(const ModulatedLines& lines, const ScanPlan& plan, const std::vector<double>& frequencies,
                      ScanResult& result) {
  const std::size_t phases = lines.phases.size();
  const std::size_t count = lines.phases.front().size();
  const BandParameters band = band_parameters(plan.band);
  const double b6 = band.bandwidth_6db_hz;
  const DetectorModel model = make_detector_model(band.detector);
  const double interval_s = lines.modulation_period_s / static_cast<double>(phases);
  // Each instant's interval [t_j − Δ/2, t_j + Δ/2] in two halves over which the fundamental runs
  // linearly from the midpoint with the instant before (periodic) to f_j and on to the midpoint
  // with the instant after.
  std::vector<double> start_hz(phases), end_hz(phases);
  for (std::size_t j = 0; j < phases; ++j) {
    const double f = lines.fundamental_at(j);
    start_hz[j] = 0.5 * (lines.fundamental_at((j + phases - 1) % phases) + f);
    end_hz[j] = 0.5 * (f + lines.fundamental_at((j + 1) % phases));
  }
  const double a = 4.0 * std::numbers::ln2 / (b6 * b6);
  parallel_chunks(thread_count(plan.threads), frequencies.size(), [&](std::size_t begin, std::size_t end) {
    std::vector<double> mean_envelope(phases), peak_envelope(phases);
    for (std::size_t i = begin; i < end; ++i) {
      const double tuned_hz = frequencies[i];
      for (std::size_t j = 0; j < phases; ++j) {
        const double f = lines.fundamental_at(j);
        const double low_hz = std::min({start_hz[j], f, end_hz[j]});
        const double high_hz = std::max({start_hz[j], f, end_hz[j]});
        // The harmonics whose (sweep-widened) span reaches the tuned frequency.
        const double fastest_hz_per_s = 2.0 * std::max(std::abs(f - start_hz[j]), std::abs(end_hz[j] - f)) / interval_s;
        const double x = a * (tuned_hz / low_hz + 1.0) * fastest_hz_per_s / std::numbers::pi;
        const double reach_hz = span_bandwidths * b6 * std::sqrt(1.0 + x * x);
        const auto first = static_cast<std::size_t>(std::max(1.0, std::ceil((tuned_hz - reach_hz) / high_hz)));
        const auto last = static_cast<std::size_t>(
            std::min(static_cast<double>(count), std::floor((tuned_hz + reach_hz) / low_hz)));
        double mean = 0.0, peak = 0.0;
        for (std::size_t k = first; k <= last; ++k) {
          const double amplitude = std::numbers::sqrt2 * std::abs(lines.phases[j][k - 1]);
          if (amplitude == 0.0) continue;
          const double kk = static_cast<double>(k);
          const SweptGain before = swept_if_gain(kk * start_hz[j] - tuned_hz, kk * f - tuned_hz, 0.5 * interval_s, b6);
          const SweptGain after = swept_if_gain(kk * f - tuned_hz, kk * end_hz[j] - tuned_hz, 0.5 * interval_s, b6);
          mean += amplitude * 0.5 * (before.mean + after.mean);
          peak += amplitude * std::max(before.highest, after.highest);
        }
        mean_envelope[j] = mean;
        peak_envelope[j] = std::max(peak, mean);
      }
      DetectorReadings r = read_periodic_envelope(mean_envelope, interval_s, model);
      r.peak = std::max(r.peak, *std::max_element(peak_envelope.begin(), peak_envelope.end()) / std::numbers::sqrt2);
      result.readings[i] = make_reading(tuned_hz, r);
    }
  });
}

}  // namespace

ScanResult scan_modulated_lines(const ModulatedLines& lines, const ScanPlan& plan,
                                std::optional<ModulatedReading> forced) {
  const double f0 = lines.fundamental_hz;
  const double period_s = lines.modulation_period_s;
  if (!(f0 > 0.0 && std::isfinite(f0))) throw Error("expected a positive fundamental frequency");
  if (!(period_s > 0.0 && std::isfinite(period_s))) throw Error("expected a positive modulation period");
  const std::size_t phases = lines.phases.size();
  if (phases == 0) throw Error("expected modulated lines at one instant at least, found none");
  const std::size_t count = lines.phases.front().size();
  for (const auto& phase : lines.phases) {
    if (phase.size() != count) throw Error("expected the same harmonics at every instant of the modulation");
  }
  const bool varying = !lines.instant_fundamental_hz.empty();
  if (varying) {
    if (lines.instant_fundamental_hz.size() != phases) {
      throw Error("expected a switching frequency at every instant of the modulation");
    }
    for (const double f : lines.instant_fundamental_hz) {
      if (!(std::isfinite(f) && f >= f0 * (1.0 - 1e-12))) {
        throw Error("expected every instant's switching frequency at or above the lowest, " +
                    format_quantity(f0, Dimension::frequency) + ", found " + format_quantity(f, Dimension::frequency));
      }
    }
    if (forced && *forced != ModulatedReading::swept && *forced != ModulatedReading::several_harmonics) {
      throw Error("lines whose switching frequency varies are read swept, not " + to_string(*forced));
    }
  }
  const BandParameters band = band_parameters(plan.band);
  const double b6 = band.bandwidth_6db_hz;
  const ModulatedReading method =
      forced.value_or(varying ? ModulatedReading::swept : modulated_reading(f0, period_s, plan.band));
  if (method == ModulatedReading::several_harmonics || f0 <= 2.0 * span_bandwidths * b6) {
    throw Error("band " + to_string(plan.band) + ": the receiver's span (" +
                format_quantity(2.0 * span_bandwidths * b6, Dimension::frequency) + ") holds several harmonics of " +
                format_quantity(f0, Dimension::frequency) + "; their beat over the modulation is not read");
  }
  const std::vector<double> frequencies = plan_frequencies(plan);
  ScanResult result = empty_scan_result(lines.quantity, plan);
  if (frequencies.empty()) return result;
  if (method == ModulatedReading::swept) {
    result.readings.resize(frequencies.size());
    read_swept_lines(lines, plan, frequencies, result);
    require_finite_readings(result);
    if (plan.noise_floor_db) apply_noise_floor(result, *plan.noise_floor_db);
    return result;
  }
  const DetectorModel model = make_detector_model(band.detector);
  const auto harmonic_count = static_cast<long long>(count);
  // The harmonic nearest the tuned frequency, or 0 when none lies within its span (±2·B6, plus
  // the sidebands' reach for the sideband reading).
  const double half_span = span_bandwidths * b6;
  const long long n_max = std::min(static_cast<long long>(std::ceil(half_span * period_s)) + 1,
                                   static_cast<long long>((phases - 1) / 2));
  const double reach_hz = method == ModulatedReading::sidebands ? half_span + static_cast<double>(n_max) / period_s
                                                                 : half_span;
  auto nearest_harmonic = [&](double tuned_hz) -> long long {
    const auto k = static_cast<long long>(std::llround(tuned_hz / f0));
    if (k < 1 || k > harmonic_count) return 0;
    return std::abs(static_cast<double>(k) * f0 - tuned_hz) <= reach_hz ? k : 0;
  };
  result.readings.resize(frequencies.size());

  if (method == ModulatedReading::quasi_static) {
    // Each harmonic's envelope √2·|X_k(t_j)| read once; the tuned frequency scales it by |H|.
    std::vector<std::optional<DetectorReadings>> per_harmonic(count);
    std::vector<long long> needed;
    for (const double f : frequencies) {
      const long long k = nearest_harmonic(f);
      if (k > 0 && !per_harmonic[static_cast<std::size_t>(k - 1)]) {
        per_harmonic[static_cast<std::size_t>(k - 1)] = DetectorReadings{};
        needed.push_back(k);
      }
    }
    const double interval_s = period_s / static_cast<double>(phases);
    parallel_chunks(thread_count(plan.threads), needed.size(), [&](std::size_t begin, std::size_t end) {
      std::vector<double> envelope(phases);
      for (std::size_t i = begin; i < end; ++i) {
        const auto index = static_cast<std::size_t>(needed[i] - 1);
        for (std::size_t j = 0; j < phases; ++j) envelope[j] = std::numbers::sqrt2 * std::abs(lines.phases[j][index]);
        per_harmonic[index] = read_periodic_envelope(envelope, interval_s, model);
      }
    });
    for (std::size_t i = 0; i < frequencies.size(); ++i) {
      const long long k = nearest_harmonic(frequencies[i]);
      DetectorReadings r;
      if (k > 0) {
        const double gain = if_gain(static_cast<double>(k) * f0 - frequencies[i], b6);
        const DetectorReadings& base = *per_harmonic[static_cast<std::size_t>(k - 1)];
        r = DetectorReadings{gain * base.peak, gain * base.quasi_peak, gain * base.average};
      }
      result.readings[i] = make_reading(frequencies[i], r);
    }
  } else {
    // Sidebands: c_{k,n} = (1/N)·Σ_j X_k(t_j)·exp(−j2π·n·t_j/T), t_j = (j + 1/2)·T/N, |n| <= n_max.
    const std::size_t width = static_cast<std::size_t>(2 * n_max + 1);
    std::vector<std::vector<std::complex<double>>> sidebands(count);
    std::vector<long long> needed;
    for (const double f : frequencies) {
      const long long k = nearest_harmonic(f);
      if (k > 0 && sidebands[static_cast<std::size_t>(k - 1)].empty()) {
        sidebands[static_cast<std::size_t>(k - 1)].resize(width);
        needed.push_back(k);
      }
    }
    for (const long long k : needed) {
      auto& c = sidebands[static_cast<std::size_t>(k - 1)];
      for (long long n = -n_max; n <= n_max; ++n) {
        std::complex<double> sum(0.0, 0.0);
        for (std::size_t j = 0; j < phases; ++j) {
          const double t = (static_cast<double>(j) + 0.5) / static_cast<double>(phases);
          sum += lines.phases[j][static_cast<std::size_t>(k - 1)] *
                 std::polar(1.0, -2.0 * std::numbers::pi * static_cast<double>(n) * t);
        }
        c[static_cast<std::size_t>(n + n_max)] = sum / static_cast<double>(phases);
      }
    }
    const std::size_t m = envelope_points(period_s, 1.0 / period_s, b6);
    const double envelope_interval_s = period_s / static_cast<double>(m);
    FftwBuffer plan_buffer(m);
    const FftwPlan backward([&] {
      return fftw_plan_dft_1d(static_cast<int>(m), plan_buffer.data, plan_buffer.data, FFTW_BACKWARD, FFTW_ESTIMATE);
    });
    parallel_chunks(thread_count(plan.threads), frequencies.size(), [&](std::size_t begin, std::size_t end) {
      FftwBuffer buffer(m);
      std::vector<std::complex<double>> phasors;
      std::vector<double> envelope;
      for (std::size_t i = begin; i < end; ++i) {
        const double tuned_hz = frequencies[i];
        const long long k = nearest_harmonic(tuned_hz);
        DetectorReadings r;
        if (k > 0) {
          phasors.clear();
          std::size_t nonzero = 0;
          double single_peak = 0.0;
          const auto& c = sidebands[static_cast<std::size_t>(k - 1)];
          for (long long n = -n_max; n <= n_max; ++n) {
            const double offset_hz = static_cast<double>(k) * f0 + static_cast<double>(n) / period_s - tuned_hz;
            if (std::abs(offset_hz) > half_span) continue;
            const std::complex<double> phasor =
                std::numbers::sqrt2 * c[static_cast<std::size_t>(n + n_max)] * if_gain(offset_hz, b6);
            if (std::abs(phasor) > 0.0) {
              ++nonzero;
              single_peak = std::abs(phasor);
            }
            phasors.push_back(phasor);
          }
          if (nonzero == 1) {
            r.peak = r.quasi_peak = r.average = single_peak / std::numbers::sqrt2;
          } else if (nonzero > 1) {
            envelope_from_lines(backward.plan, buffer, phasors, envelope);
            r = read_periodic_envelope(envelope, envelope_interval_s, model);
          }
        }
        result.readings[i] = make_reading(tuned_hz, r);
      }
    });
  }
  require_finite_readings(result);
  if (plan.noise_floor_db) apply_noise_floor(result, *plan.noise_floor_db);
  return result;
}

std::optional<Reading> highest_reading(const ScanResult& result, Detector detector) {
  const auto best = std::max_element(result.readings.begin(), result.readings.end(), [&](const Reading& x, const Reading& y) {
    return x.level_db(detector) < y.level_db(detector);
  });
  if (best == result.readings.end()) return std::nullopt;
  return *best;
}

std::vector<Reading> peak_maxima(const ScanResult& result, std::size_t count) {
  std::vector<Reading> maxima;
  const auto& r = result.readings;
  for (std::size_t i = 0; i < r.size(); ++i) {
    const bool above_before = i == 0 || r[i].peak_db >= r[i - 1].peak_db;
    const bool above_after = i + 1 == r.size() || r[i].peak_db > r[i + 1].peak_db;
    if (above_before && above_after && r[i].peak_db > level_floor_db) maxima.push_back(r[i]);
  }
  std::sort(maxima.begin(), maxima.end(), [](const Reading& a, const Reading& b) { return a.peak_db > b.peak_db; });
  if (maxima.size() > count) maxima.resize(count);
  return maxima;
}

}  // namespace spurcast

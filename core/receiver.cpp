#include "core/receiver.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>

#include "core/error.hpp"

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
  // CISPR 16-1-1 bands, 6 dB bandwidths and QP/meter time constants: REFERENCES.md §1.1 (from
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

void check_step(const TableReader& reader, std::string_view key, double step_hz, CisprBand band) {
  const BandParameters p = band_parameters(band);
  if (!(step_hz > 0.0)) {
    reader.fail(key, "expected a positive step, found " + format_quantity(step_hz, Dimension::frequency));
  }
  if (step_hz > 0.5 * p.bandwidth_6db_hz * (1.0 + 1e-9)) {
    reader.fail(key, "expected a step of at most " +
                         format_quantity(0.5 * p.bandwidth_6db_hz, Dimension::frequency) +
                         " (half the " + format_quantity(p.bandwidth_6db_hz, Dimension::frequency) +
                         " bandwidth of band " + to_string(band) + "), found " +
                         format_quantity(step_hz, Dimension::frequency));
  }
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
  reader.finish({"bands", "detectors", "step"});
  return spec;
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

std::vector<double> tuned_frequencies(CisprBand band, double step_hz) {
  const BandParameters p = band_parameters(band);
  if (!(step_hz > 0.0)) throw Error("expected a positive step, found " + format_quantity(step_hz, Dimension::frequency));
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
    if (step > 0.5 * p.bandwidth_6db_hz * (1.0 + 1e-9)) {
      throw Error("expected a step of at most " + format_quantity(0.5 * p.bandwidth_6db_hz, Dimension::frequency) +
                  " (half the " + format_quantity(p.bandwidth_6db_hz, Dimension::frequency) +
                  " bandwidth of band " + to_string(plan.band) + "), found " +
                  format_quantity(step, Dimension::frequency));
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

ScanResult scan_waveform(const Waveform& waveform, const ScanPlan& plan) {
  (void)waveform;
  (void)plan;
  throw Error("the sampled receiver is not implemented yet");
}

ScanResult scan_lines(const LineSpectrum& lines, const ScanPlan& plan) {
  (void)lines;
  (void)plan;
  throw Error("the line-spectrum receiver is not implemented yet");
}

Envelope waveform_envelope(const Waveform& waveform, double tuned_hz, double bandwidth_6db_hz) {
  (void)waveform;
  (void)tuned_hz;
  (void)bandwidth_6db_hz;
  throw Error("the sampled receiver is not implemented yet");
}

}  // namespace spurcast

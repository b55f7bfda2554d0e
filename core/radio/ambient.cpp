#include "core/radio/ambient.hpp"

#include <algorithm>
#include <cmath>

#include "core/input/error.hpp"

namespace spurcast {

std::string environment_name(Environment environment) {
  switch (environment) {
    case Environment::city: return "city";
    case Environment::residential: return "residential";
    case Environment::rural: return "rural";
    case Environment::quiet_rural: return "quiet-rural";
  }
  return "residential";
}

Environment environment_from_name(std::string_view name) {
  if (name == "city" || name == "business") return Environment::city;
  if (name == "residential") return Environment::residential;
  if (name == "rural") return Environment::rural;
  if (name == "quiet-rural") return Environment::quiet_rural;
  throw Error("expected one of city, residential, rural or quiet-rural, found \"" + std::string(name) + "\"");
}

namespace {

struct NoiseFit {
  double c_db;
  double d_db;
};

// ITU-R P.372 §5, Table 2 (man-made noise), constants as listed in docs/references.md §5.3.
NoiseFit man_made_fit(Environment environment) {
  switch (environment) {
    case Environment::city: return {76.8, 27.7};
    case Environment::residential: return {72.5, 27.7};
    case Environment::rural: return {67.2, 27.7};
    case Environment::quiet_rural: return {53.6, 28.6};
  }
  return {72.5, 27.7};
}

double frequency_mhz(double frequency_hz) {
  if (!(frequency_hz > 0.0)) throw Error("noise model needs a positive frequency");
  return frequency_hz / 1e6;
}

}  // namespace

double man_made_noise_figure_db(Environment environment, double frequency_hz) {
  const NoiseFit fit = man_made_fit(environment);
  return fit.c_db - fit.d_db * std::log10(frequency_mhz(frequency_hz));
}

double galactic_noise_figure_db(double frequency_hz) {
  return 52.0 - 23.0 * std::log10(frequency_mhz(frequency_hz));
}

bool man_made_noise_in_range(double frequency_hz) {
  return frequency_hz >= man_made_noise_min_hz && frequency_hz <= man_made_noise_max_hz;
}

double noise_field_dbuvm(double noise_figure_db, double frequency_hz, double bandwidth_hz) {
  if (!(bandwidth_hz > 0.0)) throw Error("noise bandwidth must be positive");
  return noise_figure_db + 20.0 * std::log10(frequency_mhz(frequency_hz)) + 10.0 * std::log10(bandwidth_hz) - 95.5;
}

double ambient_noise_field_dbuvm(Environment environment, double frequency_hz, double bandwidth_hz) {
  const double fit_hz = std::clamp(frequency_hz, man_made_noise_min_hz, man_made_noise_max_hz);
  return noise_field_dbuvm(man_made_noise_figure_db(environment, fit_hz), frequency_hz, bandwidth_hz);
}

}  // namespace spurcast

#include "core/radio/antenna.hpp"

#include <numbers>

#include "core/input/error.hpp"
#include "core/radio/radiated.hpp"

namespace spurcast {

std::string antenna_name(AntennaKind kind) {
  return kind == AntennaKind::ferrite ? "ferrite" : "whip";
}

std::string antenna_choice_name(AntennaChoice choice) {
  switch (choice) {
    case AntennaChoice::automatic:
      return "auto";
    case AntennaChoice::ferrite:
      return "ferrite";
    case AntennaChoice::whip:
      return "whip";
  }
  return "auto";
}

AntennaChoice antenna_choice_from_name(std::string_view name) {
  if (name == "auto") return AntennaChoice::automatic;
  if (name == "ferrite") return AntennaChoice::ferrite;
  if (name == "whip") return AntennaChoice::whip;
  throw Error("expected one of auto, ferrite or whip, found \"" + std::string(name) + "\"");
}

AntennaKind antenna_for_band(AntennaChoice choice, double band_high_hz) {
  switch (choice) {
    case AntennaChoice::ferrite:
      return AntennaKind::ferrite;
    case AntennaChoice::whip:
      return AntennaKind::whip;
    case AntennaChoice::automatic:
      break;
  }
  return band_high_hz <= ferrite_top_hz ? AntennaKind::ferrite : AntennaKind::whip;
}

double ferrite_rod_voltage_v(double frequency_hz, double rod_permeability, double turns,
                             double area_m2, double h_a_per_m) {
  // Faraday: V = dΦ/dt·N with Φ = µ0·µ_rod·A·H, RMS phasors.
  return 2.0 * std::numbers::pi * frequency_hz * mu0_h_per_m * rod_permeability * turns * area_m2 *
         h_a_per_m;
}

double ferrite_rod_effective_height_m(double frequency_hz, double rod_permeability, double turns,
                                      double area_m2) {
  const double lambda = speed_of_light_m_per_s / frequency_hz;
  return rod_permeability * 2.0 * std::numbers::pi * turns * area_m2 / lambda;
}

}  // namespace spurcast

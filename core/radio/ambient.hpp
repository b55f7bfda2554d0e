#pragma once
/// Ambient radio noise a broadcast receiver already hears: the ITU-R P.372 man-made noise figure by
/// environment, and its conversion to a noise field strength in a receiver bandwidth.
///
/// Example:
///   ambient_noise_field_dbuvm(Environment::residential, 1e6, 9e3)  // 16.54 dBµV/m
#include <string>
#include <string_view>

namespace spurcast {

/// ITU-R P.372 man-made noise categories (docs/references.md §5.3). "business" is the older name of
/// `city` and is accepted by environment_from_name().
enum class Environment { city, residential, rural, quiet_rural };

/// "city", "residential", "rural", "quiet-rural".
[[nodiscard]] std::string environment_name(Environment environment);
/// Parses the names above (and "business" for city); throws Error
/// `expected one of city, residential, rural or quiet-rural, found "x"` otherwise.
[[nodiscard]] Environment environment_from_name(std::string_view name);

/// Validity range of the man-made noise fit, ITU-R P.372 §5 Table 2 (from memory): 0.3–250 MHz.
inline constexpr double man_made_noise_min_hz = 0.3e6;
inline constexpr double man_made_noise_max_hz = 250e6;

/// Median man-made noise figure F_am = c − d·log10(f_MHz) [dB above kT0b], ITU-R P.372 (constants
/// in docs/references.md §5.3). `frequency_hz` > 0; outside 0.3–250 MHz the fit is extrapolated (callers
/// flag it with man_made_noise_in_range()).
[[nodiscard]] double man_made_noise_figure_db(Environment environment, double frequency_hz);
/// Galactic noise figure F_am = 52 − 23·log10(f_MHz) [dB], P.372-16 eq. (13) via docs/references.md
/// §5.3; only meaningful above the ionospheric cut-off (roughly above 10–20 MHz) up to ~100 MHz.
[[nodiscard]] double galactic_noise_figure_db(double frequency_hz);
/// True when `frequency_hz` lies in the fitted range of the man-made noise model.
[[nodiscard]] bool man_made_noise_in_range(double frequency_hz);

/// Noise field strength in `bandwidth_hz` for a noise figure `noise_figure_db` [dB above kT0b]:
/// E_n = F_a + 20·log10(f_MHz) + 10·log10(b_Hz) − 95.5 [dBµV/m] (short vertical monopole over
/// perfect ground; docs/references.md §5.3, constant −95.5 from memory).
[[nodiscard]] double noise_field_dbuvm(double noise_figure_db, double frequency_hz, double bandwidth_hz);

/// The man-made noise field of `environment` in `bandwidth_hz` at `frequency_hz` [dBµV/m]. Only the
/// man-made component: galactic and atmospheric noise (large on LW/MW at night) are left out, which
/// makes the ambient floor low and the verdict cautious. Outside the fitted 0.3–250 MHz the noise
/// figure is held at the nearest edge instead of extrapolated (below 0.3 MHz, on LW, this is the
/// lower and so the cautious figure, since the fit rises towards low frequencies).
[[nodiscard]] double ambient_noise_field_dbuvm(Environment environment, double frequency_hz,
                                               double bandwidth_hz);

}  // namespace spurcast

#pragma once
/// The receiving antenna of a broadcast receiver near the product, and what it responds to
/// (docs/references.md §6.5):
///  - a ferrite rod (portable LW and MW receivers) is a small loop: it responds to H, and its
///  reading is
///    expressed as the equivalent far field η0·H, the broadcasting convention for MF field
///    strength;
///  - a whip or telescopic antenna (SW and FM portables) responds to E (common practice).
/// In a plane wave the two agree (Faraday's V = ω·µ0·µ_rod·N·A·H equals h_eff·E with E = η0·H and
/// E. C. Snelling's effective height h_eff = µ_rod·2πNA/λ, Soft Ferrites, 1969); near the product,
/// where E/H is far from η0, they do not, so the choice matters.
///
/// Example:
///   antenna_for_band(AntennaChoice::automatic, 1.6065e6) == AntennaKind::ferrite
#include <string>
#include <string_view>

namespace spurcast {

enum class AntennaKind { ferrite, whip };
/// The [broadcast] antenna key: "auto" picks per band (antenna_for_band), the others force one
/// kind.
enum class AntennaChoice { automatic, ferrite, whip };

/// "ferrite", "whip".
[[nodiscard]] std::string antenna_name(AntennaKind kind);
/// "auto", "ferrite", "whip".
[[nodiscard]] std::string antenna_choice_name(AntennaChoice choice);
/// The three names above; throws Error `expected one of auto, ferrite or whip, found "x"`.
[[nodiscard]] AntennaChoice antenna_choice_from_name(std::string_view name);

/// Highest band edge [Hz] a portable receiver covers with its ferrite rod: LW and MW up to 1.705
/// MHz (region 2's MW top); SW bands, from 2.3 MHz up, use the whip (common practice).
inline constexpr double ferrite_top_hz = 2e6;

/// The antenna a receiver of a band whose upper edge is `band_high_hz` uses under `choice`.
[[nodiscard]] AntennaKind antenna_for_band(AntennaChoice choice, double band_high_hz);

/// Open-circuit voltage [V] of a ferrite-rod antenna in a magnetic field `h_a_per_m` [A/m], by
/// Faraday's law: V = ω·µ0·µ_rod·N·A·H. `rod_permeability` is the rod's effective µ_rod, `area_m2`
/// the winding's cross-section.
[[nodiscard]] double ferrite_rod_voltage_v(double frequency_hz, double rod_permeability,
                                           double turns, double area_m2, double h_a_per_m);
/// Effective height [m] of the same rod, h_eff = µ_rod·2π·N·A/λ (Snelling): V = h_eff·E in a plane
/// wave.
[[nodiscard]] double ferrite_rod_effective_height_m(double frequency_hz, double rod_permeability,
                                                    double turns, double area_m2);

}  // namespace spurcast

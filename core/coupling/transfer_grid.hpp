#pragma once
/// The conducted transfer functions at many frequencies (every bin of a sampled record) from a
/// solve on a much smaller grid: the network's transfer functions are rational in frequency and
/// smooth between its resonances, so they are solved on a logarithmic seed grid, refined by
/// bisection wherever interpolation misses the solve at an interval's midpoint, and interpolated
/// to every requested frequency.
///
/// Interpolation: complex linear in f between grid nodes, H(f) = H_a + (H_b − H_a)·(f − f_a)/(f_b − f_a)
/// (two multiply-adds per bin; the refinement puts the nodes as close as that needs).
///
/// Example:
///   const TransferFunctions h = transfer_on_grid(model, bin_frequencies_hz);
#include <cstddef>
#include <vector>

#include "core/coupling/conducted.hpp"

namespace spurcast {

/// The interpolation error accepted at every checked midpoint, relative to the solved value plus
/// 1e-9 of the function's largest magnitude (so a deep notch is not chased): 1e-4, which is
/// 0.0009 dB (judgement: a hundred times below the 0.1 dB the output shows).
inline constexpr double transfer_grid_tolerance = 1e-4;
/// Seed grid: 32 points per decade (judgement; refinement adds points near resonances).
inline constexpr double transfer_grid_seed_per_decade = 32.0;

/// What the grid cost: the solves made and the frequencies served.
struct TransferGridStats {
  std::size_t solved = 0;
  std::size_t requested = 0;
};

/// Transfer functions at `frequency_hz` (ascending, each > 0), as transfer_at() gives them within
/// `relative_tolerance` at every checked midpoint. A request of at most a few thousand frequencies
/// is solved directly (the grid would not be smaller). `stats`, when given, receives the cost.
[[nodiscard]] TransferFunctions transfer_on_grid(const ConductedModel& model, const std::vector<double>& frequency_hz,
                                                 double relative_tolerance = transfer_grid_tolerance,
                                                 TransferGridStats* stats = nullptr);

/// One of the eight functions of a TransferFunctions, e.g. &TransferFunctions::port1_per_switch_node.
using TransferMember = std::vector<std::complex<double>> TransferFunctions::*;

/// The same grid (solved, refined and checked on all eight functions alike), interpolated into the
/// `wanted` functions only; the others stay empty. A long record's bins need only the two of
/// their LISN port: a quarter of the memory of all eight (16 bytes per function and bin).
[[nodiscard]] TransferFunctions transfer_on_grid(const ConductedModel& model, const std::vector<double>& frequency_hz,
                                                 const std::vector<TransferMember>& wanted,
                                                 double relative_tolerance = transfer_grid_tolerance,
                                                 TransferGridStats* stats = nullptr);

}  // namespace spurcast

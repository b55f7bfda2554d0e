#include "core/coupling/transfer_grid.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <complex>

#include "core/input/error.hpp"

namespace spurcast {

namespace {

using cd = std::complex<double>;
constexpr std::size_t function_count = 8;

/// The eight functions of a TransferFunctions, in a fixed order.
std::array<std::vector<cd>*, function_count> columns(TransferFunctions& h) {
  return {&h.port1_per_input_current_ohm,     &h.port1_per_switch_node,
          &h.port2_per_input_current_ohm,     &h.port2_per_switch_node,
          &h.line1_current_per_input_current, &h.line1_current_per_switch_node_s,
          &h.line2_current_per_input_current, &h.line2_current_per_switch_node_s};
}

/// Complex linear interpolation, t in [0, 1] from node a to node b.
cd interpolate(cd a, cd b, double t) { return a + (b - a) * t; }

/// A solved grid node.
struct Node {
  double frequency_hz;
  std::array<cd, function_count> h;
};

std::vector<Node> solve_nodes(const ConductedModel& model, const std::vector<double>& frequency_hz) {
  TransferFunctions t = transfer_at(model, frequency_hz);
  const auto c = columns(t);
  std::vector<Node> nodes(frequency_hz.size());
  for (std::size_t f = 0; f < frequency_hz.size(); ++f) {
    nodes[f].frequency_hz = frequency_hz[f];
    for (std::size_t j = 0; j < function_count; ++j) nodes[f].h[j] = (*c[j])[f];
  }
  return nodes;
}

}  // namespace

TransferFunctions transfer_on_grid(const ConductedModel& model, const std::vector<double>& frequency_hz,
                                   double relative_tolerance, TransferGridStats* stats) {
  const std::vector<TransferMember> every{&TransferFunctions::port1_per_input_current_ohm,     &TransferFunctions::port1_per_switch_node,
           &TransferFunctions::port2_per_input_current_ohm,     &TransferFunctions::port2_per_switch_node,
           &TransferFunctions::line1_current_per_input_current, &TransferFunctions::line1_current_per_switch_node_s,
           &TransferFunctions::line2_current_per_input_current, &TransferFunctions::line2_current_per_switch_node_s};
  return transfer_on_grid(model, frequency_hz, every, relative_tolerance, stats);
}

TransferFunctions transfer_on_grid(const ConductedModel& model, const std::vector<double>& frequency_hz,
                                   const std::vector<TransferMember>& wanted, double relative_tolerance,
                                   TransferGridStats* stats) {
  const std::size_t n = frequency_hz.size();
  for (std::size_t k = 0; k < n; ++k) {
    if (!(frequency_hz[k] > 0.0) || !std::isfinite(frequency_hz[k]) || (k > 0 && frequency_hz[k] < frequency_hz[k - 1])) {
      throw Error("expected ascending frequencies above 0 Hz for the transfer grid");
    }
  }
  const double f_lo = n > 0 ? frequency_hz.front() : 1.0;
  const double f_hi = n > 0 ? frequency_hz.back() : 1.0;
  const double decades = std::log10(f_hi / f_lo);
  const auto seed_count = static_cast<std::size_t>(std::ceil(decades * transfer_grid_seed_per_decade)) + 1;
  // Direct solve when the grid would not be much smaller than the request (judgement: 4×).
  if (n <= 4 * seed_count || n < 64) {
    if (stats != nullptr) *stats = {n, n};
    TransferFunctions direct = transfer_at(model, frequency_hz);
    for (std::vector<cd>* column : columns(direct)) {
      const bool kept = std::any_of(wanted.begin(), wanted.end(), [&](TransferMember m) { return &(direct.*m) == column; });
      if (!kept) std::vector<cd>().swap(*column);
    }
    return direct;
  }

  // Seed grid, logarithmic, ending exactly on the first and last request.
  std::vector<double> seeds(seed_count);
  for (std::size_t i = 0; i < seed_count; ++i) {
    seeds[i] = f_lo * std::pow(10.0, decades * static_cast<double>(i) / static_cast<double>(seed_count - 1));
  }
  seeds.front() = f_lo;
  seeds.back() = f_hi;
  std::vector<Node> nodes = solve_nodes(model, seeds);
  std::size_t solved = nodes.size();
  std::array<double, function_count> scale{};
  for (const Node& node : nodes) {
    for (std::size_t j = 0; j < function_count; ++j) scale[j] = std::max(scale[j], std::abs(node.h[j]));
  }

  // Bisection wherever the midpoint solve and the interpolation disagree, for intervals
  // that hold a requested frequency strictly inside. `done[i]` marks interval i (nodes i, i+1).
  std::vector<bool> done(nodes.size() - 1, false);
  for (int round = 0; round < 60; ++round) {
    std::vector<std::size_t> open;
    std::vector<double> midpoints;
    for (std::size_t i = 0; i + 1 < nodes.size(); ++i) {
      if (done[i]) continue;
      const double a = nodes[i].frequency_hz;
      const double b = nodes[i + 1].frequency_hz;
      const auto inside = std::upper_bound(frequency_hz.begin(), frequency_hz.end(), a);
      if (inside == frequency_hz.end() || *inside >= b || b <= a * (1.0 + 1e-12)) {
        done[i] = true;
        continue;
      }
      open.push_back(i);
      midpoints.push_back(0.5 * (a + b));
    }
    if (open.empty()) break;
    const std::vector<Node> mids = solve_nodes(model, midpoints);
    solved += mids.size();
    for (const Node& m : mids) {
      for (std::size_t j = 0; j < function_count; ++j) scale[j] = std::max(scale[j], std::abs(m.h[j]));
    }
    // Rebuild the node list with the midpoints of the intervals that failed.
    std::vector<Node> next;
    std::vector<bool> next_done;
    std::size_t o = 0;
    for (std::size_t i = 0; i + 1 < nodes.size(); ++i) {
      next.push_back(nodes[i]);
      if (o < open.size() && open[o] == i) {
        const Node& m = mids[o];
        ++o;
        bool fits = true;
        for (std::size_t j = 0; j < function_count && fits; ++j) {
          const cd guess = interpolate(nodes[i].h[j], nodes[i + 1].h[j], 0.5);
          fits = std::abs(guess - m.h[j]) <= relative_tolerance * (std::abs(m.h[j]) + 1e-9 * scale[j]);
        }
        if (fits) {
          // Keep the solved midpoint too (it is free now), and accept both halves.
          next_done.push_back(true);
          next.push_back(m);
          next_done.push_back(true);
        } else {
          next_done.push_back(false);
          next.push_back(m);
          next_done.push_back(false);
        }
      } else {
        next_done.push_back(done[i]);
      }
    }
    next.push_back(nodes.back());
    nodes = std::move(next);
    done = std::move(next_done);
  }

  // Interpolate every request from its interval, into the wanted functions.
  TransferFunctions out;
  out.frequency_hz = frequency_hz;
  std::vector<std::pair<std::size_t, std::vector<cd>*>> c;  // (function index, column)
  const auto all = columns(out);
  for (std::size_t j = 0; j < function_count; ++j) {
    if (std::any_of(wanted.begin(), wanted.end(), [&](TransferMember m) { return &(out.*m) == all[j]; })) {
      all[j]->resize(n);
      c.emplace_back(j, all[j]);
    }
  }
  std::size_t i = 0;
  for (std::size_t k = 0; k < n; ++k) {
    const double f = frequency_hz[k];
    while (i + 2 < nodes.size() && nodes[i + 1].frequency_hz <= f) ++i;
    const Node& a = nodes[i];
    const Node& b = nodes[i + 1];
    const double t = b.frequency_hz > a.frequency_hz ? (f - a.frequency_hz) / (b.frequency_hz - a.frequency_hz) : 0.0;
    for (const auto& [j, column] : c) {
      (*column)[k] = t <= 0.0 ? a.h[j] : (t >= 1.0 ? b.h[j] : interpolate(a.h[j], b.h[j], t));
    }
  }
  if (stats != nullptr) *stats = {solved, n};
  return out;
}

}  // namespace spurcast

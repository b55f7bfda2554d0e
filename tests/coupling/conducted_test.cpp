// The converter's conducted-noise model. External checks (no published worked example with numbers
// was available to us; these are built from named formulas):
//  - the trapezoidal pulse train's Fourier coefficients, C. R. Paul, Introduction to Electromagnetic
//    Compatibility, 2nd ed., Wiley 2006, §3.2 (spectrum of a trapezoidal pulse train, two sinc
//    factors; equation number from memory not given);
//  - the LISN closed form 50 Ω ∥ (R_d + jωL) (docs/references.md §2.2 [D]) and the nodal closed forms of
//    the set-up written out here by hand: a DM current source across the input capacitor sees the
//    two LISNs in series (100 Ω at high frequency), a CM source sees them in parallel (25 Ω), each
//    port reads 50 Ω × its line current (docs/references.md §2.3 [D]);
//  - the 6 dB between one network per line and a single network with the return bonded at the EUT
//    (docs/references.md §2.3 [D]; common practice).
// The FFT waveform path and the spectrum-bin path (lisn_port_spectrum, against a DFT by its
// definition) are checked against the harmonic path (their slow twin).
#include <doctest/doctest.h>

#include <cmath>
#include <complex>

#include "core/coupling/conducted.hpp"
#include "core/coupling/transfer_grid.hpp"
#include "core/input/error.hpp"
#include "core/input/toml_reader.hpp"
#include "core/input/units.hpp"

using namespace spurcast;
using cd = std::complex<double>;

namespace {

const double rel_tol = 1e-9;  // same linear algebra, two formulations
const double tol_db = 0.05;
const double pi = 3.14159265358979323846;
const cd j(0.0, 1.0);

double sinc(double x) { return x == 0.0 ? 1.0 : std::sin(x) / x; }

/// Paul §3.2: trapezoid of amplitude A, duty D (pulse width τ = D·T measured at half amplitude),
/// equal rise and fall τr: one-sided peak amplitude of harmonic n = 2·A·D·|sinc(nπD)|·|sinc(nπτr/T)|.
/// RMS = peak/√2. Phases are irrelevant for the magnitudes checked here; we keep them real.
LineSpectrum paul_trapezoid(Quantity q, double amplitude, double duty, double rise_s, double f0, std::size_t count) {
  LineSpectrum s;
  s.quantity = q;
  s.fundamental_hz = f0;
  for (std::size_t k = 1; k <= count; ++k) {
    const double n = static_cast<double>(k);
    const double peak = 2.0 * amplitude * duty * std::abs(sinc(n * pi * duty)) * std::abs(sinc(n * pi * rise_s * f0));
    s.harmonics.emplace_back(peak / std::sqrt(2.0), 0.0);
  }
  return s;
}

cd capacitor_z(double c, double esr, double esl, double f) {
  const double w = 2.0 * pi * f;
  return cd(esr, w * esl - 1.0 / (w * c));
}

CouplingSpec example_coupling() {
  CouplingSpec c;  // the docs/design.md §5 example values
  c.input_capacitance_f = 4.7e-6;
  c.input_esr_ohm = 8e-3;
  c.input_esl_h = 1.5e-9;
  c.parasitic_capacitance_f = 35e-12;
  return c;
}

LineSpectrum empty(Quantity q) {
  LineSpectrum s;
  s.quantity = q;
  return s;
}

}  // namespace

TEST_CASE("differential mode: two LISNs in series with the input capacitor, closed form") {
  CouplingSpec coupling = example_coupling();
  coupling.parasitic_capacitance_f = 0.0;  // DM only: no path to ground but the LISNs
  const LisnSpec lisn;                      // two ideal 50 µH networks
  const ConductedModel model(coupling, {}, lisn);
  const LineSpectrum current = paul_trapezoid(Quantity::current, 6.0, 0.25, 12e-9, 220e3, 120);
  const ConductedResult r = conduct(empty(Quantity::voltage), current, model);
  REQUIRE(r.line1_v.size() == 120);
  for (std::size_t k = 0; k < r.line1_v.size(); ++k) {
    CAPTURE(r.frequency_hz[k]);
    const double f = r.frequency_hz[k];
    const cd zc = capacitor_z(4.7e-6, 8e-3, 1.5e-9, f);
    const cd zl = lisn_nominal_impedance(LisnModel::v_network_50uh, f);
    const cd i = current.harmonics[k];
    // KCL at both lines with V2 = −V1: V1 = −I·Zc·Z_L/(Zc + 2·Z_L).
    const cd v1 = -i * zc * zl / (zc + 2.0 * zl);
    CHECK(std::abs(r.line1_v[k] - v1) <= rel_tol * std::abs(v1));
    CHECK(std::abs(r.line2_v[k] + v1) <= rel_tol * std::abs(v1));
    CHECK(std::abs(r.dm_v[k] - v1) <= rel_tol * std::abs(v1));
    CHECK(std::abs(r.cm_v[k]) <= rel_tol * std::abs(v1));
    // Each port reads 50 Ω ∥ ... × its line current: I1 (LISN → EUT) = −V1/Z_L.
    CHECK(std::abs(r.line1_current_a[k] + v1 / zl) <= rel_tol * std::abs(v1 / zl));
    CHECK(std::abs(r.dm_current_a[k] + v1 / zl) <= rel_tol * std::abs(v1 / zl));
  }
  // The classic first-harmonic estimate (Paul's coefficient; |Zc| ≪ 100 Ω): V1 ≈ I1·|Zc|/2.
  // 6 A, D = 0.25, 12 ns at 220 kHz: I1 = 2·6·0.25·sinc(π/4)·sinc(π·12 ns·220 kHz)/√2 = 1.910 A RMS;
  // |Zc| at 220 kHz = |8 mΩ + j(2.07 mΩ − 153.9 mΩ)| = 0.1521 Ω; V1 ≈ 0.1453 V = 103.2 dBµV.
  const double first_dbuv = volts_to_dbuv(std::abs(r.line1_v[0]));
  CHECK(std::abs(current.harmonics[0].real() - 1.910) < 0.001);
  CHECK(std::abs(first_dbuv - 103.2) < 0.1);
}

TEST_CASE("one network per line reads 6 dB less DM than one network with the return bonded") {
  CouplingSpec coupling = example_coupling();
  coupling.input_capacitance_f = 100e-6;  // |Zc| ≪ 50 Ω, where the two set-ups differ by exactly 2×
  coupling.parasitic_capacitance_f = 0.0;
  LisnSpec two;
  LisnSpec one;
  one.lines = 1;
  const ConductedModel model_two(coupling, {}, two), model_one(coupling, {}, one);
  const std::vector<double> f = {1e6, 5e6};
  const TransferFunctions h2 = transfer_at(model_two, f), h1 = transfer_at(model_one, f);
  for (std::size_t i = 0; i < f.size(); ++i) {
    const double difference_db = 20.0 * std::log10(std::abs(h1.port1_per_input_current_ohm[i]) /
                                                  std::abs(h2.port1_per_input_current_ohm[i]));
    CHECK(std::abs(difference_db - 20.0 * std::log10(2.0)) < tol_db);
    // Single network: V1 = −I·Zc·Z_L/(Zc + Z_L) exactly.
    const cd zc = capacitor_z(100e-6, 8e-3, 1.5e-9, f[i]);
    const cd zl = lisn_nominal_impedance(LisnModel::v_network_50uh, f[i]);
    const cd expected = -zc * zl / (zc + zl);
    CHECK(std::abs(h1.port1_per_input_current_ohm[i] - expected) <= rel_tol * std::abs(expected));
    CHECK(std::abs(h1.port2_per_input_current_ohm[i]) == 0.0);
  }
  CHECK(model_two.setup_description().find("6 dB less") != std::string::npos);
  CHECK(model_one.setup_description().find("return bonded") != std::string::npos);
}

TEST_CASE("common mode: the parasitic capacitance into the two LISNs in parallel") {
  const CouplingSpec coupling = example_coupling();
  const ConductedModel model(coupling, {}, LisnSpec{});
  const std::vector<double> f = {150e3, 1e6, 10e6, 30e6};
  const TransferFunctions h = transfer_at(model, f);
  for (std::size_t i = 0; i < f.size(); ++i) {
    CAPTURE(f[i]);
    const cd zc = capacitor_z(4.7e-6, 8e-3, 1.5e-9, f[i]);
    const cd zl = lisn_nominal_impedance(LisnModel::v_network_50uh, f[i]);
    const cd ycp = j * 2.0 * pi * f[i] * 35e-12;
    // Nodal equations, switch-node source Vs = 1 between the switch node and line 2 (conv−):
    //   line 1:            V1/Z_L + (V1 − V2)/Zc = 0
    //   line 2 + switch:   V2/Z_L + (V2 − V1)/Zc + (V2 + 1)·Ycp = 0
    const cd a11 = 1.0 / zl + 1.0 / zc, a12 = -1.0 / zc;
    const cd a21 = -1.0 / zc, a22 = 1.0 / zl + 1.0 / zc + ycp;
    const cd det = a11 * a22 - a12 * a21;
    const cd v1 = (-a12 * -ycp) / det;
    const cd v2 = (a11 * -ycp) / det;
    CHECK(std::abs(h.port1_per_switch_node[i] - v1) <= rel_tol * std::abs(v1));
    CHECK(std::abs(h.port2_per_switch_node[i] - v2) <= rel_tol * std::abs(v2));
    // The textbook picture (Zc → 0): the source drives Cp into Z_L/2 (25 Ω at high frequency).
    const cd textbook = -ycp * (zl / 2.0) / (1.0 + ycp * zl / 2.0);
    const double tol_textbook = 0.01;  // Zc/Z_L is below 1 % at these frequencies
    CHECK(std::abs(0.5 * (h.port1_per_switch_node[i] + h.port2_per_switch_node[i]) - textbook) <=
          tol_textbook * std::abs(textbook));
  }
}

TEST_CASE("superposition: both sources at once = each alone, summed") {
  const ConductedModel model(example_coupling(), {}, LisnSpec{});
  const LineSpectrum v = paul_trapezoid(Quantity::voltage, 48.0, 0.25, 12e-9, 220e3, 40);
  const LineSpectrum i = paul_trapezoid(Quantity::current, 6.0, 0.25, 12e-9, 220e3, 40);
  const ConductedResult both = conduct(v, i, model);
  const ConductedResult only_v = conduct(v, empty(Quantity::current), model);
  const ConductedResult only_i = conduct(empty(Quantity::voltage), i, model);
  for (std::size_t k = 0; k < both.line1_v.size(); ++k) {
    const cd sum1 = only_v.line1_v[k] + only_i.line1_v[k];
    const cd sum2 = only_v.line2_v[k] + only_i.line2_v[k];
    CHECK(std::abs(both.line1_v[k] - sum1) <= rel_tol * std::abs(sum1));
    CHECK(std::abs(both.line2_v[k] - sum2) <= rel_tol * std::abs(sum2));
    CHECK(std::abs(both.cm_current_a[k] - 0.5 * (both.line1_current_a[k] + both.line2_current_a[k])) <= 1e-15);
  }
}

TEST_CASE("modulated lines at a varying fundamental: each line through the transfer at its own frequency") {
  // The fast path (the adaptive grid, interpolated) against its slow twin: conduct() of each
  // instant's lines at that instant's fundamental, solved directly.
  const ConductedModel model(example_coupling(), {}, LisnSpec{});
  ModulatedLines v, i;
  v.quantity = Quantity::voltage;
  i.quantity = Quantity::current;
  const std::vector<double> instants_hz = {100e3, 137.5e3, 250e3, 400e3};
  for (ModulatedLines* lines : {&v, &i}) {
    lines->fundamental_hz = 100e3;
    lines->modulation_period_s = 0.01;
    lines->instant_fundamental_hz = instants_hz;
  }
  for (const double f : instants_hz) {
    v.phases.push_back(paul_trapezoid(Quantity::voltage, 400.0, 0.3, 20e-9, f, 60).harmonics);
    i.phases.push_back(paul_trapezoid(Quantity::current, 2.0, 0.3, 20e-9, f, 60).harmonics);
  }
  const std::vector<ModulatedLines> ports = conduct_modulated(v, i, model);
  REQUIRE(ports.size() == 2);
  CHECK(ports[0].instant_fundamental_hz == instants_hz);
  for (std::size_t j = 0; j < instants_hz.size(); ++j) {
    LineSpectrum vj, ij;
    vj.quantity = Quantity::voltage;
    ij.quantity = Quantity::current;
    vj.fundamental_hz = ij.fundamental_hz = instants_hz[j];
    vj.harmonics = v.phases[j];
    ij.harmonics = i.phases[j];
    const ConductedResult direct = conduct(vj, ij, model);
    for (std::size_t k = 0; k < direct.line1_v.size(); ++k) {
      // The grid's tolerance (transfer_grid_tolerance at its checked midpoints), with a margin of 10.
      CHECK(std::abs(ports[0].phases[j][k] - direct.line1_v[k]) <= 10.0 * transfer_grid_tolerance * std::abs(direct.line1_v[k]) + 1e-15);
      CHECK(std::abs(ports[1].phases[j][k] - direct.line2_v[k]) <= 10.0 * transfer_grid_tolerance * std::abs(direct.line2_v[k]) + 1e-15);
    }
  }
  ModulatedLines shifted = i;
  shifted.instant_fundamental_hz[2] = 260e3;
  CHECK_THROWS_WITH_AS(conduct_modulated(v, shifted, model),
                       "the switch-node and input-current lines of the mains cycle do not share their instants", Error);
}

TEST_CASE("an LC stage (inductor on the LISN side): closed form, and the −40 dB/decade low-pass") {
  // lines = 1 keeps the closed form short: line 2 is bonded to ground.
  FilterStage lc;
  lc.kind = FilterKind::lc;
  lc.inductance_h = 10e-6;
  lc.inductor_resistance_ohm = 0.02;
  lc.converter_side_capacitance_f = 10e-6;
  lc.capacitor_esr_ohm = 0.01;
  CouplingSpec coupling = example_coupling();
  coupling.parasitic_capacitance_f = 0.0;
  LisnSpec lisn;
  lisn.lines = 1;
  const ConductedModel with_filter(coupling, {lc}, lisn), without(coupling, {}, lisn);
  const std::vector<double> f = {100e3, 1e6, 10e6};
  const TransferFunctions h = transfer_at(with_filter, f), h0 = transfer_at(without, f);
  for (std::size_t i = 0; i < f.size(); ++i) {
    CAPTURE(f[i]);
    const cd zin = capacitor_z(4.7e-6, 8e-3, 1.5e-9, f[i]);
    const cd zf = capacitor_z(10e-6, 0.01, 0.0, f[i]);
    const cd zl = lisn_nominal_impedance(LisnModel::v_network_50uh, f[i]);
    const cd zind(0.02, 2.0 * pi * f[i] * 10e-6);
    const cd zp = zin * zf / (zin + zf);
    const cd v1 = -zp / (zp + zind + zl) * zl;  // the current divides: Zp against (L + LISN)
    CHECK(std::abs(h.port1_per_input_current_ohm[i] - v1) <= rel_tol * std::abs(v1));
  }
  // Second-order low-pass from the pulsed current to the LISN line current: with lossless parts
  // and ωL ≫ |Z_L|, I_line/I ≈ Zp/(jωL) ∝ 1/f², i.e. −40 dB/decade (1 MHz → 10 MHz). The
  // insertion loss against no filter grows only 20 dB/decade, (Z_L + jωL)/Z_L, as the filter's
  // capacitor adds to the converter's own.
  FilterStage ideal_lc = lc;
  ideal_lc.inductance_h = 100e-6;
  ideal_lc.inductor_resistance_ohm = 0.0;
  ideal_lc.capacitor_esr_ohm = 0.0;
  CouplingSpec lossless = coupling;
  lossless.input_esr_ohm = 0.0;
  lossless.input_esl_h = 0.0;
  const ConductedModel ideal(lossless, {ideal_lc}, lisn);
  const TransferFunctions hi = transfer_at(ideal, {1e6, 10e6});
  const double slope_db = 20.0 * std::log10(std::abs(hi.line1_current_per_input_current[1]) /
                                            std::abs(hi.line1_current_per_input_current[0]));
  const double tol_slope_db = 0.5;  // the LISN's |Z_L| against ωL = 628 Ω at 1 MHz
  CHECK(std::abs(slope_db + 40.0) < tol_slope_db);
  const double loss_1mhz_db = 20.0 * std::log10(std::abs(h0.port1_per_input_current_ohm[1]) /
                                                std::abs(h.port1_per_input_current_ohm[1]));
  CHECK(loss_1mhz_db > 0.0);
}

TEST_CASE("a common-mode choke attenuates CM, barely touches DM (coupling 0.995)") {
  FilterStage choke;
  choke.kind = FilterKind::common_mode_choke;
  choke.inductance_h = 1e-3;
  choke.coupling = 0.995;
  const CouplingSpec coupling = example_coupling();
  const ConductedModel with_choke(coupling, {choke}, LisnSpec{}), without(coupling, {}, LisnSpec{});
  const std::vector<double> f = {1e6};
  const TransferFunctions h = transfer_at(with_choke, f), h0 = transfer_at(without, f);
  // CM: the switch-node path gains the choke's CM impedance jω(L + M)/2 ≈ 3.1 kΩ in series with
  // Cp's 4.5 kΩ: about 4.6 dB less. DM: the leakage jω·2(L − M) = 63 Ω against 100 Ω of LISNs,
  // with the input capacitor's 0.034 Ω shunting it: attenuation from the leakage only.
  const cd ycp = j * 2.0 * pi * 1e6 * 35e-12;
  const cd zl = lisn_nominal_impedance(LisnModel::v_network_50uh, 1e6);
  const cd zcm(0.0, 2.0 * pi * 1e6 * 1e-3 * (1.0 + 0.995) / 2.0);
  const cd expected_ratio = (1.0 / ycp + zl / 2.0) / (1.0 / ycp + zl / 2.0 + zcm);
  const double tol_ratio = 0.01;  // Zc and the choke's DM part are neglected in the formula
  const cd cm = 0.5 * (h.port1_per_switch_node[0] + h.port2_per_switch_node[0]);
  const cd cm0 = 0.5 * (h0.port1_per_switch_node[0] + h0.port2_per_switch_node[0]);
  CHECK(std::abs(std::abs(cm / cm0) - std::abs(expected_ratio)) < tol_ratio);
}

TEST_CASE("lisn_port_waveform (FFT, periodic record) against the harmonic path") {
  const ConductedModel model(example_coupling(), {}, LisnSpec{});
  const double f0 = 200e3;
  LineSpectrum v, i;
  v.quantity = Quantity::voltage;
  i.quantity = Quantity::current;
  v.fundamental_hz = i.fundamental_hz = f0;
  for (int k = 1; k <= 12; ++k) {
    v.harmonics.push_back(std::polar(10.0 / k, 0.3 * k));
    i.harmonics.push_back(std::polar(1.0 / k, -0.2 * k));
  }
  const ConductedResult r = conduct(v, i, model);
  for (const int periods : {1, 3}) {
    CAPTURE(periods);
    const std::size_t n = 256 * static_cast<std::size_t>(periods);
    Waveform wv, wi;
    wv.quantity = Quantity::voltage;
    wi.quantity = Quantity::current;
    wv.sample_rate_hz = wi.sample_rate_hz = 256.0 * f0;
    auto synth = [&](const std::vector<cd>& h, double t) {
      double x = 0.0;
      for (std::size_t k = 0; k < h.size(); ++k) {
        x += std::sqrt(2.0) * (h[k] * std::exp(j * 2.0 * pi * static_cast<double>(k + 1) * f0 * t)).real();
      }
      return x;
    };
    for (std::size_t s = 0; s < n; ++s) {
      const double t = static_cast<double>(s) / wv.sample_rate_hz;
      wv.samples.push_back(5.0 + synth(v.harmonics, t));  // DC is removed by the path
      wi.samples.push_back(2.0 + synth(i.harmonics, t));
    }
    for (const int line : {1, 2}) {
      const Waveform out = lisn_port_waveform(wv, wi, model, line);
      REQUIRE(out.samples.size() == n);
      const auto& expected = line == 1 ? r.line1_v : r.line2_v;
      double scale = 0.0, worst = 0.0;
      for (std::size_t s = 0; s < n; ++s) {
        const double e = synth(expected, static_cast<double>(s) / wv.sample_rate_hz);
        scale = std::max(scale, std::abs(e));
        worst = std::max(worst, std::abs(out.samples[s] - e));
      }
      // The transfer functions come from the adaptive grid (transfer_grid.hpp) once the record has
      // more bins than the grid would solve (the three-period record here): within its tolerance
      // of the solve, so the waveform is within that of its scale (was 1e-9 with a solve per bin;
      // measured 8e-7 relative).
      CHECK(worst <= (periods == 1 ? 1e-9 : transfer_grid_tolerance) * scale);
    }
  }
}

TEST_CASE("lisn_port_spectrum on a run of bins against the harmonic path") {
  // One period of 12 harmonics at 256 samples, its DFT by the definition X[k] = Σ x[n]·e^(−j2πkn/N)
  // over bins 3..20: harmonic h sits on bin h with X[h] = N·c_h/√2 (c_h the RMS phasor), so the
  // port's bins are N/√2 times conduct()'s lines (the harmonic path, checked above against the
  // closed-form dividers); bins 13..20 hold nothing. 19 bins are solved directly: within rounding.
  const double bins_rel_tol = 1e-9;
  const ConductedModel model(example_coupling(), {}, LisnSpec{});
  const double f0 = 200e3;
  const std::size_t n = 256;
  LineSpectrum v, i;
  v.quantity = Quantity::voltage;
  i.quantity = Quantity::current;
  v.fundamental_hz = i.fundamental_hz = f0;
  for (int k = 1; k <= 12; ++k) {
    v.harmonics.push_back(std::polar(10.0 / k, 0.3 * k));
    i.harmonics.push_back(std::polar(1.0 / k, -0.2 * k));
  }
  const ConductedResult r = conduct(v, i, model);
  auto spectrum_of = [&](const LineSpectrum& lines, std::size_t first, std::size_t last) {
    std::vector<double> x(n, 0.0);
    for (std::size_t s = 0; s < n; ++s) {
      for (std::size_t k = 0; k < lines.harmonics.size(); ++k) {
        x[s] += std::sqrt(2.0) * (lines.harmonics[k] * std::exp(j * 2.0 * pi * static_cast<double>((k + 1) * s) / static_cast<double>(n))).real();
      }
    }
    SampledSpectrum out;
    out.quantity = lines.quantity;
    out.sample_rate_hz = static_cast<double>(n) * f0;
    out.record_samples = n;
    out.first_bin = first;
    for (std::size_t k = first; k <= last; ++k) {
      cd sum(0.0, 0.0);
      for (std::size_t s = 0; s < n; ++s) sum += x[s] * std::exp(-j * 2.0 * pi * static_cast<double>(k * s) / static_cast<double>(n));
      out.bins.push_back(sum);
    }
    return out;
  };
  const SampledSpectrum sv = spectrum_of(v, 3, 20);
  const SampledSpectrum si = spectrum_of(i, 3, 20);
  for (const int line : {1, 2}) {
    CAPTURE(line);
    const SampledSpectrum port = lisn_port_spectrum(sv, si, model, line);
    CHECK(port.quantity == Quantity::voltage);
    CHECK(port.first_bin == 3);
    REQUIRE(port.bins.size() == 18);
    const auto& expected = line == 1 ? r.line1_v : r.line2_v;
    const double scale = static_cast<double>(n) / std::sqrt(2.0) * std::abs(expected[2]);
    for (std::size_t k = 3; k <= 20; ++k) {
      CAPTURE(k);
      const cd want = k <= 12 ? static_cast<double>(n) / std::sqrt(2.0) * expected[k - 1] : cd(0.0, 0.0);
      CHECK(std::abs(port.bins[k - 3] - want) <= bins_rel_tol * scale);
    }
  }
  // Inputs are checked.
  SampledSpectrum shifted = si;
  shifted.first_bin = 4;
  CHECK_THROWS_WITH_AS((void)lisn_port_spectrum(sv, shifted, model, 1),
                       "the switch-node and input-current spectra differ in bins, record length or sample rate", Error);
  CHECK_THROWS_WITH_AS((void)lisn_port_spectrum(si, SampledSpectrum{}, model, 1),
                       "expected a switch-node voltage spectrum, found a current", Error);
  CHECK_THROWS_WITH_AS((void)lisn_port_spectrum(sv, si, model, 3), "expected line 1 or 2, found 3", Error);
}

TEST_CASE("conduct: inputs are checked") {
  const ConductedModel model(example_coupling(), {}, LisnSpec{});
  LineSpectrum v = paul_trapezoid(Quantity::voltage, 48.0, 0.25, 12e-9, 220e3, 3);
  LineSpectrum i = paul_trapezoid(Quantity::current, 6.0, 0.25, 12e-9, 221e3, 3);
  CHECK_THROWS_WITH_AS((void)conduct(v, i, model),
                       "the switch-node and input-current spectra have different fundamentals (220 kHz, 221 kHz)", Error);
  i.quantity = Quantity::voltage;
  i.fundamental_hz = 220e3;
  CHECK_THROWS_WITH_AS((void)conduct(v, i, model), "expected an input-current spectrum, found a voltage", Error);
  // Harmonic counts may differ: the shorter is padded with zeros.
  i = paul_trapezoid(Quantity::current, 6.0, 0.25, 12e-9, 220e3, 5);
  CHECK(conduct(v, i, model).line1_v.size() == 5);
}

TEST_CASE("[coupling] reader: defaults, values and exact error text") {
  {
    const auto table = parse_toml_text(
        "input_capacitance = \"4.7 uF\"\ninput_esr = \"8 mOhm\"\ninput_esl = \"1.5 nH\"\nparasitic_capacitance = \"35 pF\"\n",
        "s.toml");
    TableReader reader(table, "s.toml", "coupling");
    const CouplingSpec c = read_coupling_section(reader);
    CHECK(c.input_capacitance_f == doctest::Approx(4.7e-6));
    CHECK(c.input_esr_ohm == doctest::Approx(8e-3));
    CHECK(c.input_esl_h == doctest::Approx(1.5e-9));
    CHECK(c.parasitic_capacitance_f == doctest::Approx(35e-12));
  }
  {
    const auto table = parse_toml_text("input_capacitanse = \"4.7 uF\"\n", "s.toml");
    TableReader reader(table, "s.toml", "coupling");
    CHECK_THROWS_WITH_AS((void)read_coupling_section(reader),
                         "s.toml:1:1: unknown key 'input_capacitanse' in [coupling]; did you mean 'input_capacitance'?",
                         Error);
  }
  {
    const auto table = parse_toml_text("input_esr = -0.01\n", "s.toml");
    TableReader reader(table, "s.toml", "coupling");
    CHECK_THROWS_WITH_AS((void)read_coupling_section(reader), "s.toml:1:13: expected a resistance >= 0, found -10 m\xCE\xA9",
                         Error);
  }
}

TEST_CASE("every filter kind, both LISN circuits and both set-ups build and give finite results") {
  FilterStage lc;
  lc.kind = FilterKind::lc;
  lc.inductance_h = 4.7e-6;
  lc.converter_side_capacitance_f = 10e-6;
  FilterStage pi_stage = lc;
  pi_stage.kind = FilterKind::pi;
  pi_stage.lines = FilterLines::both;
  pi_stage.lisn_side_capacitance_f = 1e-6;
  FilterStage choke;
  choke.kind = FilterKind::common_mode_choke;
  choke.inductance_h = 1e-3;
  FilterStage y;
  y.kind = FilterKind::y_capacitors;
  y.lines = FilterLines::both;
  y.converter_side_capacitance_f = 4.7e-9;
  FilterStage netlist;
  netlist.kind = FilterKind::netlist;
  NetlistElement r;
  r.type = 'R';
  r.from = "in+";
  r.to = "mid";
  r.value = 0.1;
  NetlistElement l = r;
  l.type = 'L';
  l.from = "mid";
  l.to = "out+";
  l.value = 1e-6;
  netlist.elements = {r, l};
  const LineSpectrum v = paul_trapezoid(Quantity::voltage, 48.0, 0.25, 12e-9, 220e3, 200);
  const LineSpectrum i = paul_trapezoid(Quantity::current, 6.0, 0.25, 12e-9, 220e3, 200);
  for (const int lines : {1, 2}) {
    for (const LisnCircuit circuit : {LisnCircuit::ideal, LisnCircuit::practical}) {
      for (const LisnModel lisn_model : {LisnModel::v_network_50uh, LisnModel::v_network_5uh}) {
        CAPTURE(lines);
        LisnSpec lisn;
        lisn.lines = lines;
        lisn.circuit = circuit;
        lisn.model = lisn_model;
        const ConductedModel model(example_coupling(), {y, choke, pi_stage, netlist, lc}, lisn);
        const ConductedResult result = conduct(v, i, model);
        for (std::size_t k = 0; k < result.line1_v.size(); ++k) {
          CHECK(std::isfinite(std::abs(result.line1_v[k])));
          CHECK(std::isfinite(std::abs(result.line2_v[k])));
          CHECK(std::isfinite(std::abs(result.cm_current_a[k])));
        }
        if (lines == 1) CHECK(std::abs(result.line2_v[0]) == 0.0);
      }
    }
  }
  // A netlist node that only capacitors reach is reported by name.
  FilterStage floating;
  floating.kind = FilterKind::netlist;
  NetlistElement c1;
  c1.type = 'C';
  c1.from = "in+";
  c1.to = "island";
  c1.value = 1e-9;
  NetlistElement c2 = c1;
  c2.from = "island";
  c2.to = "in-";
  floating.elements = {c1, c2};
  CHECK_THROWS_WITH_AS((void)ConductedModel(example_coupling(), {floating}, LisnSpec{}),
                       "node 'filter1.island' has no DC path to the reference ground", Error);
}

// The receiver on lines that follow a slow modulation (scan_modulated_lines, a boost PFC stage over
// the mains half-cycle). External checks:
//  - the arithmetic of a linear average: an emission present a fraction p of each half-cycle at
//    constant amplitude reads p times its ungated level on the average detector, 20·log10(p) dB
//    (CISPR average = linear average of the envelope through the meter, docs/references.md §1.6);
//  - a scipy implementation of the same CISPR 16-1-1 detectors (docs/references.md §1.1, §1.4a:
//    the diode quasi-peak detector with its charge constant solved from the 63 % definition, the
//    critically damped meter) run by /usr/bin/python3 on the same envelope samples: Debian's
//    python3-scipy (solve_ivp, brentq, quad, lsim), written here independently of detector.cpp.
#include <doctest/doctest.h>

#include <cmath>
#include <complex>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <numbers>
#include <string>
#include <vector>

#include <unistd.h>

#include "core/input/error.hpp"
#include "core/input/units.hpp"
#include "core/receiver/receiver.hpp"

using namespace spurcast;

namespace {

/// The average reading follows 20·log10(p) to within 0.01 dB (the IF and the meter are linear;
/// the only departure is the meter's ripple at the half-cycle rate, some 1e-4).
const double average_tolerance_db = 0.01;
/// The scipy detectors and the project's agree within 0.05 dB (two integrators of the same
/// equations: Heun on a table of g against adaptive Runge-Kutta; block-held against sample-held
/// meter input).
const double scipy_tolerance_db = 0.05;
/// The exact sideband reading and the quasi-static one agree within 0.1 dB in band B on 50 Hz
/// mains (the IF response, about 0.1 ms, is short against the 10 ms half-cycle).
const double quasi_static_tolerance_db = 0.1;

double db(double ratio) { return 20.0 * std::log10(ratio); }

const std::size_t instants = 256;
const double half_cycle_s = 0.01;  // 50 Hz mains

/// Lines of fundamental f0 whose harmonic `k` has the RMS amplitude amplitude[j] at instant j (the
/// other harmonics are zero).
ModulatedLines one_harmonic(double f0_hz, std::size_t k, const std::vector<double>& amplitude) {
  ModulatedLines lines;
  lines.quantity = Quantity::voltage;
  lines.fundamental_hz = f0_hz;
  lines.modulation_period_s = half_cycle_s;
  for (const double a : amplitude) {
    std::vector<std::complex<double>> harmonics(k + 2);
    harmonics[k - 1] = std::polar(a, 0.3);
    lines.phases.push_back(harmonics);
  }
  return lines;
}

/// 1 V during the first `on` instants of the half-cycle, 0 after.
std::vector<double> gate(std::size_t on) {
  std::vector<double> a(instants, 0.0);
  for (std::size_t j = 0; j < on; ++j) a[j] = 1.0;
  return a;
}

/// |sin θ_j| where it is at least `threshold`, else 0 (a PFC stage idling near the zero crossing).
std::vector<double> rectified(double threshold) {
  std::vector<double> a(instants);
  for (std::size_t j = 0; j < instants; ++j) {
    const double s = std::sin(std::numbers::pi * (static_cast<double>(j) + 0.5) / static_cast<double>(instants));
    a[j] = s >= threshold ? s : 0.0;
  }
  return a;
}

Reading spot(const ModulatedLines& lines, CisprBand band, double tuned_hz,
             std::optional<ModulatedReading> method = std::nullopt) {
  ScanPlan plan;
  plan.band = band;
  plan.frequencies_hz = {tuned_hz};
  const ScanResult result = scan_modulated_lines(lines, plan, method);
  REQUIRE(result.readings.size() == 1);
  return result.readings.front();
}

std::string fmt_double(double x) {
  char text[40];
  std::snprintf(text, sizeof text, "%.17g", x);
  return text;
}

bool have_scipy() { return std::system("/usr/bin/python3 -c \"import scipy, numpy\" > /dev/null 2>&1") == 0; }

/// The CISPR 16-1-1 average and quasi-peak readings of a periodic envelope (peak volts, samples
/// `dt` apart) by scipy: [average, quasi-peak] in V RMS.
std::vector<double> scipy_readings(const std::vector<double>& envelope, double dt, const DetectorTimeConstants& c) {
  const std::filesystem::path dir = std::filesystem::temp_directory_path() /
                                    ("spurcast_modulated_lines_test_" + std::to_string(::getpid()));  // one per run
  std::filesystem::create_directories(dir);
  {
    std::ofstream out(dir / "envelope.txt");
    out.precision(17);
    for (const double e : envelope) out << e << "\n";
  }
  {
    std::ofstream py(dir / "detect.py");
    py << R"PY(import sys
import numpy as np
from scipy.integrate import solve_ivp, quad
from scipy.optimize import brentq
from scipy.signal import lsim
env = np.loadtxt(sys.argv[1])
dt, tc, td, tm = (float(x) for x in sys.argv[2:6])
n = len(env)
period = n * dt
# Half-wave diode detector on the IF carrier (CISPR 16-1-1): averaged over a carrier cycle the
# charging current is e*g(V/e)/Rc, g(r) = (sin(phi) - phi*cos(phi))/pi, cos(phi) = r.
def g(r):
    if r <= 0.0:
        return 1.0 / np.pi
    if r >= 1.0:
        return 0.0
    phi = np.arccos(r)
    return (np.sin(phi) - phi * r) / np.pi
def final_ratio(rc):  # CW steady state: tan(phi) - phi = pi*Rc/Rd
    phi = brentq(lambda p: np.tan(p) - p - np.pi * rc / td, 1e-12, np.pi / 2 - 1e-12, xtol=1e-15)
    return np.cos(phi)
def charge_time(rc):  # 0 to 63 % of the final value after a suddenly applied sine
    v63 = (1.0 - np.exp(-1.0)) * final_ratio(rc)
    return quad(lambda v: 1.0 / (g(v) / rc - v / td), 0.0, v63, limit=400, epsabs=0, epsrel=1e-12)[0]
rc = brentq(lambda x: charge_time(x) - tc, tc * 1e-3, tc, xtol=1e-16, rtol=1e-13)
rf = final_ratio(rc)
knots_t = np.arange(n + 1) * dt
knots_e = np.append(env, env[0])  # linear between samples, the last joining the first
def rhs(t, v):
    e = np.interp(t, knots_t, knots_e)
    charge = e * g(v[0] / e) if e > 0.0 else 0.0
    return [charge / rc - v[0] / td]
def one_period(v0, dense=False):
    s = solve_ivp(rhs, (0.0, period), [v0], method="RK45", rtol=1e-10, atol=1e-13 * max(env.max(), 1e-30),
                  max_step=dt / 2, t_eval=(np.arange(n) + 1) * dt if dense else None)
    return s.y[0] if dense else s.y[0, -1]
v_star = brentq(lambda v: one_period(v) - v, 0.0, env.max(), xtol=1e-12 * env.max())
qp_trace = one_period(v_star, dense=True)  # V after each sample, as detector.cpp records it
def meter_max(u):  # 1/(1 + s*tm)^2 driven by the periodic input held over each sample
    periods = int(np.ceil(40.0 * tm / period)) + 1
    x = np.tile(u, periods)
    t = np.arange(len(x)) * dt
    _, y, _ = lsim(([1.0], [tm * tm, 2.0 * tm, 1.0]), x, t, interp=False)
    return y[-n:].max()
print(meter_max(env) / np.sqrt(2.0), meter_max(qp_trace) / (rf * np.sqrt(2.0)))
)PY";
  }
  const std::string command = "/usr/bin/python3 " + (dir / "detect.py").string() + " " +
                              (dir / "envelope.txt").string() + " " + fmt_double(dt) + " " + fmt_double(c.charge_s) +
                              " " + fmt_double(c.discharge_s) + " " + fmt_double(c.meter_s) + " > " +
                              (dir / "out.txt").string();
  REQUIRE(std::system(command.c_str()) == 0);
  std::ifstream in(dir / "out.txt");
  double average = 0.0, quasi_peak = 0.0;
  in >> average >> quasi_peak;
  in.close();
  std::filesystem::remove_all(dir);
  return {average, quasi_peak};
}

}  // namespace

TEST_CASE("gating: the average falls by 20·log10 of the fraction present, the quasi-peak far less") {
  // 200 kHz, harmonic 2 of 100 kHz, 1 V RMS while present; band B reads it quasi-static, band A
  // (harmonic 2 of 20 kHz at 40 kHz) by its exact sidebands at 100 Hz. In band B the quasi-peak
  // falls by less than a tenth of the average's drop. Band A's 200 Hz IF smooths the 100 Hz gating
  // (its response lasts about half a half-cycle), so there the quasi-peak falls nearly as far as
  // the average, though always less, as a lab receiver's would.
  struct Case {
    CisprBand band;
    double f0_hz;
    ModulatedReading method;
    double quasi_peak_share;  // the largest quasi-peak drop, as a share of the average's
  };
  for (const Case c : {Case{CisprBand::B, 100e3, ModulatedReading::quasi_static, 0.1},
                       Case{CisprBand::A, 20e3, ModulatedReading::sidebands, 0.9}}) {
    CHECK(modulated_reading(c.f0_hz, half_cycle_s, c.band) == c.method);
    const Reading ungated = spot(one_harmonic(c.f0_hz, 2, gate(instants)), c.band, 2.0 * c.f0_hz);
    CHECK(ungated.average_db == doctest::Approx(120.0).epsilon(1e-6));  // 1 V RMS = 120 dBµV
    for (const std::size_t on : {std::size_t{192}, std::size_t{128}, std::size_t{64}, std::size_t{16}}) {
      const double p = static_cast<double>(on) / static_cast<double>(instants);
      const Reading gated = spot(one_harmonic(c.f0_hz, 2, gate(on)), c.band, 2.0 * c.f0_hz);
      const double average_drop_db = ungated.average_db - gated.average_db;
      const double quasi_peak_drop_db = ungated.quasi_peak_db - gated.quasi_peak_db;
      MESSAGE("band " << to_string(c.band) << ", present " << p * 100.0 << " % of the half-cycle: average −"
                      << average_drop_db << " dB (20·log10 p = " << db(p) << " dB), quasi-peak −" << quasi_peak_drop_db
                      << " dB, peak −" << ungated.peak_db - gated.peak_db << " dB");
      CHECK(std::abs(average_drop_db + db(p)) < average_tolerance_db);
      CHECK(quasi_peak_drop_db > 0.0);
      CHECK(quasi_peak_drop_db < c.quasi_peak_share * average_drop_db);
      CHECK(gated.quasi_peak_db > gated.average_db);
    }
  }
}

TEST_CASE("the detectors on a gated and a rectified-mains envelope agree with scipy's (python3-scipy)") {
  if (!have_scipy()) {
    MESSAGE("skipped: /usr/bin/python3 with numpy and scipy not found (install Debian's python3-scipy)");
    return;
  }
  const double dt = half_cycle_s / static_cast<double>(instants);
  for (const CisprBand band : {CisprBand::A, CisprBand::B}) {
    const BandParameters parameters = band_parameters(band);
    const DetectorModel model = make_detector_model(parameters.detector);
    for (const std::vector<double>& amplitude : {gate(64), rectified(0.3)}) {
      // The envelope the quasi-static reading hands the detectors: √2·RMS, peak volts.
      std::vector<double> envelope;
      for (const double a : amplitude) envelope.push_back(std::numbers::sqrt2 * a);
      const DetectorReadings ours = read_periodic_envelope(envelope, dt, model);
      const std::vector<double> theirs = scipy_readings(envelope, dt, parameters.detector);
      MESSAGE("band " << to_string(band) << ": average " << volts_to_dbuv(ours.average) << " / scipy "
                      << volts_to_dbuv(theirs[0]) << " dBµV, quasi-peak " << volts_to_dbuv(ours.quasi_peak)
                      << " / scipy " << volts_to_dbuv(theirs[1]) << " dBµV");
      CHECK(std::abs(db(ours.average / theirs[0])) < scipy_tolerance_db);
      CHECK(std::abs(db(ours.quasi_peak / theirs[1])) < scipy_tolerance_db);
    }
  }
}

TEST_CASE("band B: the exact sideband reading and the quasi-static one agree (the IF follows the mains)") {
  const ModulatedLines lines = one_harmonic(100e3, 2, rectified(0.3));
  for (const double offset_hz : {0.0, 3e3, -6e3}) {
    const Reading exact = spot(lines, CisprBand::B, 200e3 + offset_hz, ModulatedReading::sidebands);
    const Reading quick = spot(lines, CisprBand::B, 200e3 + offset_hz, ModulatedReading::quasi_static);
    MESSAGE("offset " << offset_hz << " Hz: peak " << exact.peak_db << " / " << quick.peak_db << ", quasi-peak "
                      << exact.quasi_peak_db << " / " << quick.quasi_peak_db << ", average " << exact.average_db
                      << " / " << quick.average_db << " dBµV");
    CHECK(std::abs(exact.peak_db - quick.peak_db) < quasi_static_tolerance_db);
    CHECK(std::abs(exact.quasi_peak_db - quick.quasi_peak_db) < quasi_static_tolerance_db);
    CHECK(std::abs(exact.average_db - quick.average_db) < quasi_static_tolerance_db);
  }
}

TEST_CASE("a span that holds several harmonics is refused, and so are malformed lines") {
  CHECK(modulated_reading(30e3, half_cycle_s, CisprBand::B) == ModulatedReading::several_harmonics);
  CHECK(modulated_reading(36e3, half_cycle_s, CisprBand::B) == ModulatedReading::several_harmonics);
  CHECK(modulated_reading(37e3, half_cycle_s, CisprBand::B) == ModulatedReading::quasi_static);
  ScanPlan plan;
  plan.band = CisprBand::B;
  plan.frequencies_hz = {200e3};
  CHECK_THROWS_WITH_AS(scan_modulated_lines(one_harmonic(30e3, 2, gate(10)), plan),
                       "band B: the receiver's span (36 kHz) holds several harmonics of 30 kHz; their beat over the "
                       "modulation is not read",
                       Error);
  ModulatedLines ragged = one_harmonic(100e3, 2, gate(10));
  ragged.phases[3].resize(1);
  CHECK_THROWS_WITH_AS(scan_modulated_lines(ragged, plan), "expected the same harmonics at every instant of the modulation",
                       Error);
}

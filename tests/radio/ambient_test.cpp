// Ambient man-made noise. External checks: ITU-R P.372 man-made noise constants and the derived values
// of docs/references.md §5.3 and §10 item 26 (F_am = c − d·log10 f_MHz; E_n = F_a + 20·log10 f_MHz +
// 10·log10 b − 95.5, the −95.5 constant from memory).
#include <doctest/doctest.h>

#include <cmath>

#include "core/radio/ambient.hpp"
#include "core/input/error.hpp"

using namespace spurcast;

namespace {
const double tol_db = 0.01;
bool near(double a, double b) { return std::abs(a - b) <= tol_db; }
}  // namespace

TEST_CASE("P.372 man-made noise figure (docs/references.md §10 item 26)") {
  CHECK(near(man_made_noise_figure_db(Environment::residential, 1e6), 72.50));
  CHECK(near(man_made_noise_figure_db(Environment::city, 10e6), 49.10));
  CHECK(near(man_made_noise_figure_db(Environment::quiet_rural, 100e6), -3.60));
  CHECK(near(galactic_noise_figure_db(10e6), 29.00));
  CHECK(near(man_made_noise_figure_db(Environment::residential, 100e6), 17.10));  // §5.3
}

TEST_CASE("P.372 noise field in 9 kHz (docs/references.md §5.3 derived table)") {
  struct Row {
    Environment environment;
    double fam_1mhz, en_1mhz, fam_10mhz, en_10mhz;
  };
  const Row rows[] = {{Environment::city, 76.80, 20.84, 49.10, 13.14},
                      {Environment::residential, 72.50, 16.54, 44.80, 8.84},
                      {Environment::rural, 67.20, 11.24, 39.50, 3.54},
                      {Environment::quiet_rural, 53.60, -2.36, 25.00, -10.96}};
  for (const Row& row : rows) {
    CAPTURE(environment_name(row.environment));
    CHECK(near(man_made_noise_figure_db(row.environment, 1e6), row.fam_1mhz));
    CHECK(near(man_made_noise_figure_db(row.environment, 10e6), row.fam_10mhz));
    CHECK(near(ambient_noise_field_dbuvm(row.environment, 1e6, 9e3), row.en_1mhz));
    CHECK(near(ambient_noise_field_dbuvm(row.environment, 10e6, 9e3), row.en_10mhz));
  }
  // 10·log10 of the bandwidth: 200 kHz is 13.47 dB above 9 kHz.
  CHECK(near(ambient_noise_field_dbuvm(Environment::rural, 98e6, 200e3) -
                 ambient_noise_field_dbuvm(Environment::rural, 98e6, 9e3),
             10.0 * std::log10(200.0 / 9.0)));
}

TEST_CASE("environment names; the fit's range") {
  CHECK(environment_from_name("business") == Environment::city);  // P.372's older name
  CHECK(environment_from_name("quiet-rural") == Environment::quiet_rural);
  for (Environment e : {Environment::city, Environment::residential, Environment::rural, Environment::quiet_rural}) {
    CHECK(environment_from_name(environment_name(e)) == e);
  }
  CHECK_THROWS_WITH_AS((void)environment_from_name("urban"),
                       "expected one of city, residential, rural or quiet-rural, found \"urban\"", Error);
  CHECK(man_made_noise_in_range(0.3e6));
  CHECK(man_made_noise_in_range(250e6));
  CHECK_FALSE(man_made_noise_in_range(200e3));
  // Below the fit (LW) the 0.3 MHz noise figure is held; only the field conversion follows f.
  CHECK(near(ambient_noise_field_dbuvm(Environment::residential, 200e3, 9e3),
             noise_field_dbuvm(man_made_noise_figure_db(Environment::residential, 0.3e6), 200e3, 9e3)));
}

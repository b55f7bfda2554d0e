// Band plans and the line-to-channel mapping. External checks: band edges and channel rasters of
// ITU Radio Regulations Article 5 as collected in docs/references.md §4 (marked `from memory` where that
// section marks them [M]), the membership checks of docs/references.md §10 item 28, and hand-computed
// harmonic-to-channel cases. The fast mapping (sorted lines, binary search) has a brute-force twin.
#include <doctest/doctest.h>

#include <filesystem>

#include <sys/wait.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <random>
#include <string>

#include "core/radio/bands.hpp"
#include "core/input/error.hpp"
#include "core/input/toml_reader.hpp"

using namespace spurcast;

namespace {

const double tol_hz = 1e-3;
const double tol_db = 1e-9;

const Band& band_named(const BandPlan& plan, const std::string& name) {
  for (const Band& band : plan.bands) {
    if (band.name == name) return band;
  }
  FAIL("no band " << name << " in " << plan.name);
  return plan.bands.front();
}

bool plan_has(const BandPlan& plan, const std::string& name) {
  return std::any_of(plan.bands.begin(), plan.bands.end(), [&](const Band& b) { return b.name == name; });
}

// Names of the bands of `plan` containing `frequency_hz`.
std::vector<std::string> bands_containing(const BandPlan& plan, double frequency_hz) {
  std::vector<std::string> names;
  for (const Band& band : plan.bands) {
    if (band.contains(frequency_hz)) names.push_back(band.name);
  }
  return names;
}

bool contains_name(const std::vector<std::string>& names, const std::string& name) {
  return std::find(names.begin(), names.end(), name) != names.end();
}

std::string data_file(const std::string& name) {
  return std::string(SPURCAST_SOURCE_DIR) + "/tests/data/bands/" + name;
}

// The slow, obviously correct twin of map_lines_to_band: every channel against every line, through a
// Gaussian written out: amplitude 2^(−(2Δ/B)²), half (−6.02 dB) at Δ = B/2, cut at 60 dB down.
std::vector<ChannelHit> brute_force_hits(const Band& band, const std::vector<SpectralLine>& lines) {
  std::vector<ChannelHit> hits;
  for (double centre : band.channel_centres_hz()) {
    ChannelHit hit;
    hit.centre_hz = centre;
    double power = 0.0;
    for (const SpectralLine& line : lines) {
      const double x = 2.0 * (line.frequency_hz - centre) / band.bandwidth_hz;
      const double amplitude = std::pow(2.0, -x * x);
      if (amplitude >= 1e-3) {
        power += std::pow(10.0, line.level_db / 10.0) * amplitude * amplitude;
        ++hit.line_count;
      }
    }
    if (hit.line_count == 0) continue;
    hit.level_db = 10.0 * std::log10(power);
    hits.push_back(hit);
  }
  return hits;
}

}  // namespace

TEST_CASE("shipped band plans load and carry their sources") {
  for (int region = 1; region <= 3; ++region) {
    CAPTURE(region);
    const BandPlan plan = load_region_band_plan(region, locate_shipped_data());
    CHECK(plan.region == region);
    CHECK_FALSE(plan.source.empty());
    for (const Band& band : plan.bands) {
      CAPTURE(band.name);
      CHECK(band.region == region);
      CHECK_FALSE(band.source.empty());
      CHECK(band.low_hz < band.high_hz);
      CHECK_FALSE(band.channel_centres_hz().empty());
    }
  }
}

TEST_CASE("LW and MW edges and rasters (ITU RR Article 5, docs/references.md §4.1)") {
  const BandPlan r1 = load_region_band_plan(1, locate_shipped_data());
  const BandPlan r2 = load_region_band_plan(2, locate_shipped_data());
  const BandPlan r3 = load_region_band_plan(3, locate_shipped_data());
  // LW, Region 1 only: 148.5-283.5 kHz (148.5 kHz from RR 5.64; 283.5 kHz from memory), carriers
  // on 9 kHz, 153-279 kHz (from memory).
  const Band& lw = band_named(r1, "LW");
  CHECK(lw.low_hz == doctest::Approx(148.5e3));
  CHECK(lw.high_hz == doctest::Approx(283.5e3));
  const auto lw_channels = lw.channel_centres_hz();
  CHECK(lw_channels.front() == doctest::Approx(153e3));
  CHECK(lw_channels.back() == doctest::Approx(279e3));
  CHECK(lw_channels.size() == 15);
  CHECK_FALSE(plan_has(r2, "LW"));
  CHECK_FALSE(plan_has(r3, "LW"));
  // MW Regions 1 and 3: 526.5-1606.5 kHz, 9 kHz raster 531-1602 kHz (Region 3 since 1978; Region 1
  // Geneva 1975, from memory).
  for (const BandPlan* plan : {&r1, &r3}) {
    CAPTURE(plan->region);
    const Band& mw = band_named(*plan, "MW");
    CHECK(mw.low_hz == doctest::Approx(526.5e3));
    CHECK(mw.high_hz == doctest::Approx(1606.5e3));
    CHECK(mw.raster_hz == doctest::Approx(9e3));
    const auto channels = mw.channel_centres_hz();
    CHECK(channels.front() == doctest::Approx(531e3));
    CHECK(channels.back() == doctest::Approx(1602e3));
    CHECK(channels.size() == (1602 - 531) / 9 + 1);
  }
  // MW Region 2: 525-1705 kHz, 10 kHz raster; US carriers 540-1700 kHz (117 of them), plus 530 kHz.
  const Band& mw2 = band_named(r2, "MW");
  CHECK(mw2.low_hz == doctest::Approx(525e3));
  CHECK(mw2.high_hz == doctest::Approx(1705e3));
  const auto channels2 = mw2.channel_centres_hz();
  CHECK(channels2.front() == doctest::Approx(530e3));
  CHECK(channels2.back() == doctest::Approx(1700e3));
  const auto us_carriers = std::count_if(channels2.begin(), channels2.end(),
                                         [](double c) { return c >= 540e3 - tol_hz; });
  CHECK(us_carriers == 117);
}

TEST_CASE("HF broadcasting bands (ITU RR Article 5 after WRC-97/03/07/12, docs/references.md §4.2)") {
  struct Edge {
    const char* name;
    double low_khz;
    double high_khz;
  };
  // Same in every region; 60 m, 13 m and 11 m edges from memory.
  const Edge common[] = {{"120 m", 2300, 2495},   {"90 m", 3200, 3400},    {"60 m", 4750, 4995},
                         {"60 m upper", 5005, 5060}, {"49 m", 5900, 6200}, {"31 m", 9400, 9900},
                         {"25 m", 11600, 12100},  {"22 m", 13570, 13870},  {"19 m", 15100, 15800},
                         {"16 m", 17480, 17900},  {"15 m", 18900, 19020},  {"13 m", 21450, 21850},
                         {"11 m", 25670, 26100}};
  for (int region = 1; region <= 3; ++region) {
    const BandPlan plan = load_region_band_plan(region, locate_shipped_data());
    for (const Edge& edge : common) {
      CAPTURE(region);
      CAPTURE(edge.name);
      const Band& band = band_named(plan, edge.name);
      CHECK(band.low_hz == doctest::Approx(edge.low_khz * 1e3));
      CHECK(band.high_hz == doctest::Approx(edge.high_khz * 1e3));
      // 5 kHz raster on HF [F: docs/references.md §4.1].
      CHECK(band.raster_hz == doctest::Approx(5e3));
      CHECK(band.modulation == Modulation::am);
    }
  }
  // 41 m: 7200-7450 kHz in Regions 1 and 3, only 7300-7400 kHz in all regions; 75 m: Regions 1 and 3,
  // 3900-3950 kHz Region 3 only.
  CHECK(band_named(load_region_band_plan(1, locate_shipped_data()), "41 m").low_hz == doctest::Approx(7200e3));
  CHECK(band_named(load_region_band_plan(1, locate_shipped_data()), "41 m").high_hz == doctest::Approx(7450e3));
  CHECK(band_named(load_region_band_plan(2, locate_shipped_data()), "41 m").low_hz == doctest::Approx(7300e3));
  CHECK(band_named(load_region_band_plan(2, locate_shipped_data()), "41 m").high_hz == doctest::Approx(7400e3));
  CHECK(band_named(load_region_band_plan(1, locate_shipped_data()), "75 m").low_hz == doctest::Approx(3950e3));
  CHECK(band_named(load_region_band_plan(3, locate_shipped_data()), "75 m").low_hz == doctest::Approx(3900e3));
  CHECK_FALSE(plan_has(load_region_band_plan(2, locate_shipped_data()), "75 m"));
}

TEST_CASE("VHF FM edges and rasters (docs/references.md §4.3)") {
  const BandPlan r1 = load_region_band_plan(1, locate_shipped_data());
  const BandPlan r2 = load_region_band_plan(2, locate_shipped_data());
  const BandPlan r3 = load_region_band_plan(3, locate_shipped_data());
  const Band& fm1 = band_named(r1, "FM");
  CHECK(fm1.low_hz == doctest::Approx(87.5e6));
  CHECK(fm1.high_hz == doctest::Approx(108e6));
  CHECK(fm1.raster_hz == doctest::Approx(100e3));
  CHECK(fm1.modulation == Modulation::fm);
  CHECK(fm1.channel_centres_hz().front() == doctest::Approx(87.6e6));
  CHECK(fm1.channel_centres_hz().back() == doctest::Approx(107.9e6));
  // Americas: odd multiples of 100 kHz, US carriers 87.9-107.9 MHz (87.9 MHz lies below 88 MHz and is
  // left out of the 88-108 MHz band here).
  const auto us = band_named(r2, "FM").channel_centres_hz();
  CHECK(us.front() == doctest::Approx(88.1e6));
  CHECK(us.back() == doctest::Approx(107.9e6));
  CHECK(us[1] - us[0] == doctest::Approx(200e3));
  // OIRT 65.9-74.0 MHz, 30 kHz raster; Japan 76-95 MHz.
  const Band& oirt = band_named(r1, "FM OIRT");
  CHECK(oirt.low_hz == doctest::Approx(65.9e6));
  CHECK(oirt.high_hz == doctest::Approx(74.0e6));
  CHECK(oirt.raster_hz == doctest::Approx(30e3));
  const Band& japan = band_named(r3, "FM Japan");
  CHECK(japan.low_hz == doctest::Approx(76e6));
  CHECK(japan.high_hz == doctest::Approx(95e6));
}

TEST_CASE("band-plan membership (docs/references.md §10 item 28)") {
  const BandPlan r1 = load_region_band_plan(1, locate_shipped_data());
  const BandPlan r2 = load_region_band_plan(2, locate_shipped_data());
  const BandPlan r3 = load_region_band_plan(3, locate_shipped_data());
  // 1 MHz ∈ MW in every region.
  for (const BandPlan* plan : {&r1, &r2, &r3}) CHECK(contains_name(bands_containing(*plan, 1e6), "MW"));
  // 1.62 MHz ∈ MW only in Region 2.
  CHECK(contains_name(bands_containing(r2, 1.62e6), "MW"));
  CHECK_FALSE(contains_name(bands_containing(r1, 1.62e6), "MW"));
  CHECK_FALSE(contains_name(bands_containing(r3, 1.62e6), "MW"));
  // 200 kHz ∈ LW only in Region 1.
  CHECK(bands_containing(r1, 200e3) == std::vector<std::string>{"LW"});
  CHECK(bands_containing(r2, 200e3).empty());
  CHECK(bands_containing(r3, 200e3).empty());
  // 6.1 MHz ∈ 49 m.
  for (const BandPlan* plan : {&r1, &r2, &r3}) CHECK(bands_containing(*plan, 6.1e6) == std::vector<std::string>{"49 m"});
  // 98 MHz ∈ FM (87.5-108).
  for (const BandPlan* plan : {&r1, &r2, &r3}) CHECK(contains_name(bands_containing(*plan, 98e6), "FM"));
  // 80 MHz ∈ FM only in Japan (76-95) or Brazil's extended band (76-108).
  CHECK(bands_containing(r1, 80e6).empty());
  CHECK(bands_containing(r2, 80e6) == std::vector<std::string>{"FM Brazil extended"});
  CHECK(bands_containing(r3, 80e6) == std::vector<std::string>{"FM Japan"});
  // 70 MHz ∈ OIRT FM (65.9-74).
  CHECK(bands_containing(r1, 70e6) == std::vector<std::string>{"FM OIRT"});
}

TEST_CASE("a 100 kHz source puts a line on every 10th Region 2 MW channel centre (hand-computed)") {
  const Band mw = band_named(load_region_band_plan(2, locate_shipped_data()), "MW");
  std::vector<SpectralLine> lines;
  for (int k = 1; k <= 40; ++k) lines.push_back({k * 100e3, 60.0 - k});
  const BandOccupancy occupancy = map_lines_to_band(mw, lines);
  // Harmonics 6..17 (600-1700 kHz) are inside 525-1705 kHz.
  REQUIRE(occupancy.lines_inside.size() == 12);
  CHECK(lines[occupancy.lines_inside.front()].frequency_hz == doctest::Approx(600e3));
  // Each line is heard in full by the channel on it, and by its two neighbours 10 kHz away through
  // the Gaussian skirt, −6.02·(20/9)² = −29.73 dB (the 1700 kHz line has no channel above it).
  const double skirt_db = -20.0 * std::log10(2.0) * (20.0 / 9.0) * (20.0 / 9.0);
  REQUIRE(occupancy.channels.size() == 12 * 3 - 1);
  const auto centres = mw.channel_centres_hz();
  std::size_t on_line = 0;
  for (std::size_t i = 0; i < occupancy.channels.size(); ++i) {
    const ChannelHit& hit = occupancy.channels[i];
    CAPTURE(hit.centre_hz);
    CHECK(hit.line_count == 1);
    const double nearest = std::round(hit.centre_hz / 100e3) * 100e3;
    CHECK(hit.strongest_line_hz == doctest::Approx(nearest));
    const double level = 60.0 - nearest / 100e3;
    if (std::abs(hit.centre_hz - nearest) < tol_hz) {
      CHECK(hit.level_db == doctest::Approx(level).epsilon(tol_db));
      // Every 10th centre of the 10 kHz grid: index in the channel list steps by 10.
      const auto index = std::find_if(centres.begin(), centres.end(),
                                      [&](double c) { return std::abs(c - hit.centre_hz) < tol_hz; }) - centres.begin();
      CHECK(index == 7 + 10 * static_cast<long>(on_line++));
    } else {
      CHECK(std::abs(std::abs(hit.centre_hz - nearest) - 10e3) < tol_hz);
      CHECK(hit.level_db == doctest::Approx(level + skirt_db).epsilon(tol_db));
    }
  }
  CHECK(on_line == 12);
  // The loudest is the lowest harmonic inside (level 60 − 6 dB).
  REQUIRE(occupancy.worst_channel);
  CHECK(occupancy.channels[*occupancy.worst_channel].centre_hz == doctest::Approx(600e3));
  CHECK(occupancy.channels[*occupancy.worst_channel].level_db == doctest::Approx(54.0).epsilon(tol_db));
}

TEST_CASE("a line between two Region 2 MW channels is heard in both, at -7.4 dB (docs/references.md §5.5)") {
  const Band mw = band_named(load_region_band_plan(2, locate_shipped_data()), "MW");  // 10 kHz raster, 9 kHz receiver
  // A brick-wall 9 kHz passband heard nothing of 1045 kHz (5 kHz from 1040 and from 1050 kHz). A 9 kHz
  // Gaussian passes a line 5 kHz off centre at −7.43 dB [D]: 20·log10(2^(−(10/9)²)).
  const double expected_db = 20.0 * std::log10(std::pow(2.0, -(10.0 / 9.0) * (10.0 / 9.0)));
  CHECK(expected_db == doctest::Approx(-7.43).epsilon(0.001));
  CHECK(channel_response_db(5e3, 9e3) == doctest::Approx(expected_db).epsilon(1e-12));
  const BandOccupancy occupancy = map_lines_to_band(mw, {{1045e3, 70.0}});
  std::size_t heard_at_level = 0;
  for (const ChannelHit& hit : occupancy.channels) {
    if (std::abs(hit.centre_hz - 1040e3) < tol_hz || std::abs(hit.centre_hz - 1050e3) < tol_hz) {
      CHECK(hit.level_db == doctest::Approx(70.0 + expected_db).epsilon(tol_db));
      ++heard_at_level;
    } else {
      CHECK(hit.level_db < 70.0 + expected_db);
    }
  }
  CHECK(heard_at_level == 2);
  // Every offset is heard somewhere: sweep a line across a raster step.
  for (double f = 1040e3; f <= 1050e3; f += 250.0) {
    CAPTURE(f);
    const BandOccupancy one = map_lines_to_band(mw, {{f, 70.0}});
    REQUIRE(one.worst_channel);
    CHECK(one.channels[*one.worst_channel].level_db >= 70.0 + expected_db - 1e-9);
  }
  // The reach: 60 dB down at 1.578 bandwidths.
  CHECK(channel_response_db(channel_reach_hz(9e3), 9e3) == doctest::Approx(channel_stop_db));
}

TEST_CASE("lines in one passband are power-summed through the response: the energy of a dithered line") {
  Band band;
  band.name = "test";
  band.low_hz = 500e3;
  band.high_hz = 1500e3;
  band.raster_hz = 10e3;
  band.bandwidth_hz = 9e3;
  // Two equal lines 1 kHz either side of 1000 kHz: each −6.02·(2/9)² = −0.297 dB, together +3.01 dB.
  const auto two = map_lines_to_band(band, {{999e3, 30.0}, {1001e3, 30.0}});
  REQUIRE(two.worst_channel);
  const ChannelHit& centre = two.channels[*two.worst_channel];
  CHECK(centre.centre_hz == doctest::Approx(1000e3));
  CHECK(centre.level_db == doctest::Approx(30.0 - 20.0 * std::log10(2.0) * (2.0 / 9.0) * (2.0 / 9.0) + 10.0 * std::log10(2.0)).epsilon(tol_db));
  CHECK(centre.line_count == 2);
  // At the edge of the 6 dB bandwidth, 4.5 kHz from 1000 kHz: −6.02 dB; 5.5 kHz from 1010 kHz: −8.99 dB.
  const auto edge = map_lines_to_band(band, {{1004.5e3, 20.0}});
  for (const ChannelHit& hit : edge.channels) {
    if (std::abs(hit.centre_hz - 1000e3) < tol_hz) CHECK(hit.level_db == doctest::Approx(20.0 - 20.0 * std::log10(2.0)).epsilon(tol_db));
    if (std::abs(hit.centre_hz - 1010e3) < tol_hz) {
      CHECK(hit.level_db == doctest::Approx(20.0 - 20.0 * std::log10(2.0) * (11.0 / 9.0) * (11.0 / 9.0)).epsilon(tol_db));
    }
  }
}

TEST_CASE("fast mapping agrees with the brute-force twin on a random spread spectrum") {
  const Band mw = band_named(load_region_band_plan(1, locate_shipped_data()), "MW");
  std::mt19937 random(12345);
  std::uniform_real_distribution<double> frequency(400e3, 1700e3);
  std::uniform_real_distribution<double> level(-20.0, 60.0);
  std::vector<SpectralLine> lines(3000);
  for (auto& line : lines) line = {frequency(random), level(random)};
  const BandOccupancy fast = map_lines_to_band(mw, lines);
  const std::vector<ChannelHit> slow = brute_force_hits(mw, lines);
  REQUIRE(fast.channels.size() == slow.size());
  for (std::size_t i = 0; i < slow.size(); ++i) {
    CHECK(fast.channels[i].centre_hz == doctest::Approx(slow[i].centre_hz));
    CHECK(fast.channels[i].line_count == slow[i].line_count);
    CHECK(fast.channels[i].level_db == doctest::Approx(slow[i].level_db).epsilon(1e-12));
  }
}

TEST_CASE("band-plan loader errors carry file:line:column") {
  CHECK_THROWS_WITH_AS((void)load_band_plan(data_file("unknown_key.toml")),
                       (data_file("unknown_key.toml") + ":9:1: unknown key 'rastr' in [band 1]; did you mean 'raster'?").c_str(),
                       Error);
  CHECK_THROWS_WITH_AS((void)load_band_plan(data_file("low_above_high.toml")),
                       (data_file("low_above_high.toml") + ":8:8: expected high > low (283.5 kHz), found 148.5 kHz").c_str(),
                       Error);
  CHECK_THROWS_WITH_AS((void)load_band_plan(data_file("bad_raster.toml")),
                       (data_file("bad_raster.toml") + ":9:10: raster 200 kHz is wider than the band (120 kHz)").c_str(),
                       Error);
  CHECK_THROWS_WITH_AS((void)load_band_plan(data_file("bad_modulation.toml")),
                       (data_file("bad_modulation.toml") + ":11:14: expected one of am or fm, found \"pm\"; did you mean 'am'?").c_str(),
                       Error);
  CHECK_THROWS_WITH_AS((void)load_band_plan(data_file("duplicate_name.toml")),
                       (data_file("duplicate_name.toml") + ":13:1: duplicate band name '49 m'").c_str(), Error);
  CHECK_THROWS_WITH_AS((void)load_band_plan(data_file("bad_region.toml")),
                       (data_file("bad_region.toml") + ":2:10: expected ITU region 1, 2 or 3, found 4").c_str(), Error);
}

TEST_CASE("[broadcast] plan paths resolve against the scenario's folder; a missing plan is an error") {
  const std::string folder = std::string(SPURCAST_SOURCE_DIR) + "/tests/data/bands";
  const toml::table table = parse_toml_text("plan = \"unknown_key.toml\"\n", folder + "/s.toml");
  TableReader reader(table, folder + "/s.toml", "broadcast");
  const BroadcastSpec spec = read_broadcast_section(reader, locate_shipped_data());
  CHECK(*spec.plan == folder + "/unknown_key.toml");
  const toml::table missing = parse_toml_text("plan = \"nowhere\"\n", "m.toml");
  TableReader missing_reader(missing, "m.toml", "broadcast");
  CHECK_THROWS_WITH_AS((void)read_broadcast_section(missing_reader, locate_shipped_data()),
                       ("m.toml:1:8: band plan not found: " + locate_shipped_data().bands_directory() + "/nowhere.toml").c_str(),
                       Error);
}

TEST_CASE("band-plan rasters that would explode the channel list are rejected (found by fuzzing)") {
  // A typo'd unit ("5 fHz") or a band at 1e20 Hz once made the loader lay out billions of channels,
  // or loop for ever where k + 1 == k in double precision.
  CHECK_THROWS_WITH_AS((void)load_band_plan(data_file("raster_femtohertz.toml")),
                       (data_file("raster_femtohertz.toml") +
                        ":19:10: raster 5 fHz is finer than the resolution of frequencies near 19.02 MHz").c_str(),
                       Error);
  CHECK_THROWS_WITH_AS((void)load_band_plan(data_file("huge_channel_count.toml")),
                       (data_file("huge_channel_count.toml") +
                        ":9:10: raster 1 Hz gives more than 100000 channels in 1e-285 fHz to 1 THz").c_str(),
                       Error);
  CHECK_THROWS_AS((void)load_band_plan(data_file("raster_below_resolution.toml")), Error);
  CHECK_THROWS_WITH_AS((void)load_band_plan(data_file("bandwidth_wider_than_band.toml")),
                       (data_file("bandwidth_wider_than_band.toml") +
                        ":10:13: receiver bandwidth 2 MHz is wider than the band (1.08 MHz)").c_str(),
                       Error);
}

TEST_CASE("[broadcast] section of a scenario") {
  SUBCASE("defaults") {
    const toml::table table = parse_toml_text("", "s.toml");
    TableReader reader(table, "s.toml", "broadcast");
    const BroadcastSpec spec = read_broadcast_section(reader, locate_shipped_data());
    CHECK(spec.region == 1);
    CHECK(spec.distance_m == doctest::Approx(3.0));
    CHECK(spec.cable_length_m == doctest::Approx(1.5));
    CHECK(spec.environment == Environment::residential);
    CHECK_FALSE(spec.plan);
    CHECK(spec.antenna == AntennaChoice::automatic);
    CHECK_FALSE(spec.ground_reflection);
    CHECK(spec.extra_bands.empty());
  }
  SUBCASE("every key, and a user band") {
    const toml::table table = parse_toml_text(R"(region = 2
distance = "10 m"
cable_length = "2 m"
environment = "business"
plan = "region2"
antenna = "whip"
ground_reflection = true
[[band]]
name = "DCF77"
low = "77 kHz"
high = "78 kHz"
bandwidth = "200 Hz"
modulation = "am"
protection_ratio = "20 dB"
)", "s.toml");
    TableReader reader(table, "s.toml", "broadcast");
    const BroadcastSpec spec = read_broadcast_section(reader, locate_shipped_data());
    CHECK(spec.region == 2);
    CHECK(spec.distance_m == doctest::Approx(10.0));
    CHECK(spec.cable_length_m == doctest::Approx(2.0));
    CHECK(spec.environment == Environment::city);  // "business" is P.372's older name for city
    // A bare name is the shipped plan, resolved at load time.
    CHECK(std::filesystem::path(*spec.plan).filename() == "region2.toml");
    CHECK(spec.antenna == AntennaChoice::whip);
    CHECK(spec.ground_reflection);
    REQUIRE(spec.extra_bands.size() == 1);
    const Band& dcf = spec.extra_bands[0];
    CHECK(dcf.region == 0);
    CHECK(dcf.channel_centres_hz() == std::vector<double>{77.5e3});  // no raster: one channel at the centre
    CHECK(dcf.wanted_field_dbuvm == doctest::Approx(60.0));          // AM default (BS.560)
    CHECK(dcf.protection_ratio_db == doctest::Approx(20.0));
    const std::vector<Band> bands = bands_for(spec, locate_shipped_data());
    CHECK(bands.back().name == "DCF77");
    CHECK(bands.front().name == "MW");
  }
  SUBCASE("areas") {
    CHECK(parse_area_m2("4 cm2") == doctest::Approx(4e-4));
    CHECK(parse_area_m2("4 cm\xC2\xB2") == doctest::Approx(4e-4));
    CHECK(parse_area_m2("400 mm2") == doctest::Approx(4e-4));
    CHECK(parse_area_m2("4e-4 m2") == doctest::Approx(4e-4));
    CHECK_THROWS_WITH_AS((void)parse_area_m2("4 cm"), "expected an area (e.g. \"4 cm2\"), found \"4 cm\"", Error);
  }
  SUBCASE("errors") {
    auto read = [](const std::string& text) {
      const toml::table table = parse_toml_text(text, "s.toml");
      TableReader reader(table, "s.toml", "broadcast");
      return read_broadcast_section(reader, locate_shipped_data());
    };
    CHECK_THROWS_WITH_AS((void)read("region = 1\nenvironment = \"urban\"\n"),
                         "s.toml:2:15: expected one of city, residential, rural or quiet-rural, found \"urban\"", Error);
    CHECK_THROWS_WITH_AS((void)read("distnce = \"3 m\"\n"),
                         "s.toml:1:1: unknown key 'distnce' in [broadcast]; did you mean 'distance'?", Error);
    CHECK_THROWS_WITH_AS((void)read("region = 0\n"), "s.toml:1:10: expected ITU region 1, 2 or 3, found 0", Error);
    // The DM current at the LISN around a loop area was the wrong source: the key moved to [board].
    CHECK_THROWS_WITH_AS((void)read("loop_area = \"2 cm2\"\n"),
                         "s.toml:1:13: loop_area is now [board] hot_loop_area: the switching cell's loop, carrying "
                         "the pulsed source current", Error);
    CHECK_THROWS_WITH_AS((void)read("antenna = \"loop\"\n"),
                         "s.toml:1:11: expected one of auto, ferrite or whip, found \"loop\"", Error);
    CHECK_THROWS_WITH_AS((void)read("[[band]]\nname = \"x\"\nlow = \"1 MHz\"\nhigh = \"2 MHz\"\nbandwidth = \"9 kHz\"\nmodulation = \"am\"\nband = 1\n"),
                         "s.toml:7:1: unknown key 'band' in [broadcast.band 1]", Error);
  }
}

TEST_CASE("spurcast bands --region 2 --json lists the Region 2 plan (end to end)") {
  const std::string command = std::string(SPURCAST_EXECUTABLE) + " bands --region 2 --json";
  FILE* pipe = popen(command.c_str(), "r");
  REQUIRE(pipe != nullptr);
  std::string output;
  char buffer[4096];
  while (std::fgets(buffer, sizeof buffer, pipe) != nullptr) output += buffer;
  const int status = pclose(pipe);
  CHECK(status == 0);
  // MW of Region 2 on its 10 kHz raster, 530-1700 kHz (docs/references.md §4.1).
  CHECK(output.find("\"name\": \"ITU Region 2\"") != std::string::npos);
  CHECK(output.find("\"low_hz\": 525000.0") != std::string::npos);
  CHECK(output.find("\"first_channel_hz\": 530000.0") != std::string::npos);
  CHECK(output.find("\"last_channel_hz\": 1700000.0") != std::string::npos);
  CHECK(output.find("ITU Region 1") == std::string::npos);
  // A region outside 1..3 is a usage error (exit code 2).
  const std::string bad = std::string(SPURCAST_EXECUTABLE) + " bands --region 4 2>/dev/null";
  FILE* bad_pipe = popen(bad.c_str(), "r");
  REQUIRE(bad_pipe != nullptr);
  while (std::fgets(buffer, sizeof buffer, bad_pipe) != nullptr) {
  }
  const int bad_status = pclose(bad_pipe);
  CHECK(WEXITSTATUS(bad_status) == 2);
}

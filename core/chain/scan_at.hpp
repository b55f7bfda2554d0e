#pragma once
/// The measuring receiver on its own, as `spurcast scan` runs it: CISPR 16-1-1 peak, quasi-peak and
/// average readings over whole bands (tuned at the band start plus whole steps) or at spot
/// frequencies, at the source, the pulsed input current or the LISN receiver port. Undithered
/// described sources go through the exact line receiver; dithered ones and captures through the
/// FFT receiver on a sampled record, as the prediction does.
///
/// Example:
///   ScanRequest request;
///   request.band = CisprBand::B;
///   const ScanReport report = scan_scenario(load_scenario("buck.toml", locate_shipped_data()), request);
///   scan_csv(report);  // core/output/scan_output.hpp
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "core/chain/scenario.hpp"
#include "core/receiver/receiver.hpp"

namespace spurcast {

/// What to scan.
struct ScanRequest {
  std::string at = "lisn";            ///< source | current | lisn
  std::optional<CisprBand> band;      ///< none: the scenario's [receiver] bands, or the band of each spot frequency
  std::optional<double> step_hz;      ///< [Hz] none: the scenario's step, else the band's default
  std::string step_origin;            ///< who gave step_hz, named in its errors (e.g. "--step")
  std::vector<double> frequencies_hz; ///< [Hz] spot readings at these tuned frequencies; empty = scan the bands
  unsigned threads = 0;               ///< FFT receiver threads; 0 = every core
};

/// The readings of one scan command: one ScanResult per band, ascending band.
struct ScanReport {
  std::string scenario_file;        ///< as named by the scenario
  std::string at;                   ///< source | current | lisn
  bool spot = false;                ///< spot readings rather than band scans
  std::vector<Detector> detectors;  ///< the scenario's receiver detectors, in its order
  std::vector<ScanResult> bands;
};

/// The plans of a request: one per band (spot frequencies grouped by their band), ascending band,
/// each checked (step at most B6/2, spot frequencies inside the band) before any work.
[[nodiscard]] std::vector<ScanPlan> scan_plans(const Scenario& scenario, const ScanRequest& request);

/// Reads one plan at `at` (source | current | lisn; at the LISN the worse of the two lines). Voltage
/// readings are held at the receiver's noise floor, the scenario's `[receiver] noise_floor` or
/// default_noise_floor_dbuv(band), unless the plan sets its own (ScanResult::noise_floor_db says
/// which); current readings have none (a note says why). Error for a voltage capture at "current".
[[nodiscard]] ScanResult scan_at(const Scenario& scenario, const std::string& at, const ScanPlan& plan);

/// Every plan of the request, read in turn; `on_band` (if set) is called before each band is read,
/// for a progress display. Error for an unknown point or a scenario without a source.
[[nodiscard]] ScanReport scan_scenario(const Scenario& scenario, const ScanRequest& request,
                                       const std::function<void(CisprBand)>& on_band = {});

}  // namespace spurcast

#pragma once
/// The prediction report (issue 8): the files of a report folder, made from one Prediction.
///   spectrum.csv         LISN-port harmonics: harmonic,frequency_hz,level_dbuv,line1_dbuv,line2_dbuv,dm_dbuv,cm_dbuv
///                        (level_dbuv is the higher of the two lines; docs/design.md §4)
///   source_spectrum.csv  source harmonics: harmonic,frequency_hz,level_dbuv[,envelope_dbuv]
///                        (the switch-node voltage; envelope for described sources)
///   source_current_spectrum.csv  the same for the pulsed input current (level_dbua[,envelope_dbua])
///   scan.csv             receiver readings, the worst of the lines: frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv,at_floor
///                        (at_floor: the detectors, joined by '+', whose reading is the receiver's noise floor)
///   margins.csv          core/compliance/margins.hpp margins_csv()
///   bands.csv            core/radio/reception.hpp bands_csv()
///   scan-<band>.svg, radiated-<band>-<distance>.svg, source.svg  the plots, also inlined in the report
///   report.html          one self-contained page (inline CSS, SVG and script, nothing fetched; reads the same without script)
///   summary.json         verdict, worst_margin_db per detector, bands, files, and more
/// The CSVs print fixed decimals (frequencies %.1f Hz, levels %.2f dB) so the same prediction always
/// gives the same bytes; the page shows levels and margins to 0.1 dB and frequencies to 4 significant
/// digits, no finer than the model is right (issue 19).
///
/// Example:
///   const Prediction p = predict(load_scenario("examples/greenhouse-buck.toml", locate_shipped_data()));
///   write_output_directory("spurcast-report", report_files(p));
#include <cstddef>
#include <string>
#include <vector>

#include "core/output/output_dir.hpp"
#include "core/output/plot.hpp"
#include "core/chain/prediction.hpp"

namespace spurcast {

/// spectrum.csv: the conducted result at the harmonics (header only when there is none).
[[nodiscard]] std::string lisn_spectrum_csv(const Prediction& prediction);
/// source_spectrum.csv: the switch-node voltage lines; `envelope_dbuv` (the envelope of the plain
/// trapezoid without ringing, core/source/source.hpp trapezoid_envelope_rms; a ringing source's lines
/// exceed it) for a described source.
[[nodiscard]] std::string source_spectrum_csv(const Prediction& prediction);
/// source_current_spectrum.csv: the input-current lines, `level_dbua` and `envelope_dbua` (the latter
/// only for a flat-topped pulse: not for a boost's triangular ripple or a ramped top, [converter]).
[[nodiscard]] std::string source_current_spectrum_csv(const Prediction& prediction);
/// scan.csv: the worst-of-lines readings of every band in one ascending list; at a frequency shared
/// by two bands (30 MHz) the lower band's reading is kept (CISPR 16-1-1: 30 MHz belongs to band B).
/// The added last column `at_floor` names the detectors whose reading is the receiver's noise floor
/// ("peak+quasi-peak+average", "average", ... or empty).
[[nodiscard]] std::string scan_csv(const Prediction& prediction);

// worst_frequencies() and WorstFrequency: core/chain/prediction.hpp.

/// summary.json (docs/design.md §4): keys verdict, worst_margin_db {detector: dB} (per limit-line
/// detector), bands [{name, region, verdict, ...}], files, plus title, scenario, source, guard_db,
/// worst, worst_frequencies, uncertainty_db, limits, scans, notes. dB values rounded to 0.01 exactly
/// as the CSVs print them.
[[nodiscard]] std::string summary_json(const Prediction& prediction, const std::vector<std::string>& files);

/// What the prediction did not compute, one sentence each, in the order every output shows them
/// first: the parts of limit lines without a reading (with the reason), the unread parts of the
/// receiver bands, and the broadcast bands above the highest computed frequency.
[[nodiscard]] std::vector<std::string> not_computed_lines(const Prediction& prediction);

/// The verdict in one sentence (terminal and report): what the verdict rests on, and for
/// `incomplete` which range was not computed and why; for a common-mode-only capture it says that
/// differential-mode noise is not included.
[[nodiscard]] std::string verdict_sentence(const Prediction& prediction);

/// "" for a source that drives both paths; for a capture that drives only one, the sentence that
/// says which noise is not included ("common-mode noise only: differential-mode noise is not
/// included ..."), shown before the verdict and above every margins table.
[[nodiscard]] std::string single_path_warning(const Prediction& prediction);

/// One row of the scenario table: what, and its value with units (format_quantity).
struct ScenarioInput {
  std::string section;  ///< "source", "coupling", "filter 1", "lisn", ...
  std::string name;
  std::string value;
};
/// Every input of the scenario, in file order, for the report.
[[nodiscard]] std::vector<ScenarioInput> scenario_inputs(const Scenario& scenario);

/// The receiver plot of one band: peak / quasi-peak / average against the conducted limit lines (a
/// colour per limit set, a dash per detector; detectors that coincide drawn once with a note), the
/// receiver's noise floor, broadcast bands shaded, one marker per emission (its worst reading, with
/// frequency and margin; skirts within a receiver bandwidth or of the same harmonic are one emission).
/// With `before` (the same band read for the scenario before a change, design-filter --report),
/// its readings are drawn too, light and dashed, labelled "before".
[[nodiscard]] SpectrumPlot readings_plot(const Prediction& prediction, const BandScan& scan,
                                         const BandScan* before = nullptr);
/// "scan-B.svg": the file name of readings_plot() of `scan` in a report folder.
[[nodiscard]] std::string readings_plot_file(const BandScan& scan);
/// The radiated-field plot of one band C/D estimate: the readings (dBµV/m) against the radiated limit
/// lines at the scan's distance, one marker per emission. Written as radiated-<band>-<distance>.svg.
[[nodiscard]] SpectrumPlot radiated_plot(const Prediction& prediction, const RadiatedScan& scan);
/// "10m", "3m": the measuring distance as written in the radiated plot's file name.
[[nodiscard]] std::string radiated_distance_name(double distance_m);
/// The harmonic spectrum of the switch-node voltage (or of the captured quantity) with the plain
/// trapezoid's envelope for a described source, and the harmonics above it (ringing) marked.
[[nodiscard]] SpectrumPlot source_plot(const Prediction& prediction);

/// The channel strip of one broadcast band (core/output/plot.hpp ChannelStrip): each channel that
/// hears a line with its verdict; a band above the computed range is drawn as not computed.
[[nodiscard]] ChannelStrip channel_strip(const BandReception& band);

/// The report page. `files` are the names written beside it (listed at the end).
/// With `before` (the prediction of the scenario before a change, e.g. the filter design-filter
/// proposed), the plots carry its readings too and the margins section opens with a before/after
/// table of the worst margin per limit-line detector (id "before-after").
[[nodiscard]] std::string report_html(const Prediction& prediction, const std::vector<std::string>& files,
                                      const Prediction* before = nullptr);

/// The titles of the report's sections, in order (each is an <h2> with an id; tests check them).
[[nodiscard]] const std::vector<std::string>& report_section_ids();

/// Every file of the report folder, summary.json last; `before` as for report_html (the SVG files
/// carry its readings too).
[[nodiscard]] std::vector<OutputFile> report_files(const Prediction& prediction, const Prediction* before = nullptr);

}  // namespace spurcast

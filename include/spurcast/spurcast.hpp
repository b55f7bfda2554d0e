#pragma once
/// spurcast as a library: every public header of the core, in data-flow order (input, source,
/// coupling, receiver, compliance, radio, chain, output; docs/design.md §3).
///
/// Example (CMake: find_package(spurcast) and target_link_libraries(app PRIVATE spurcast::core)):
///   #include <spurcast/spurcast.hpp>
///   const spurcast::Scenario s = spurcast::load_scenario("board.toml",
///   spurcast::locate_shipped_data()); const spurcast::Prediction p = spurcast::predict(s);
///
/// The test `umbrella_header_lists_every_core_header` keeps this list complete.
#include "core/input/error.hpp"
#include "core/input/shipped_data.hpp"
#include "core/input/toml.hpp"
#include "core/input/toml_reader.hpp"
#include "core/input/units.hpp"
#include "core/source/capture.hpp"
#include "core/source/fftw_lock.hpp"
#include "core/source/huge_pages.hpp"
#include "core/source/source.hpp"
#include "core/source/spectrum.hpp"
#include "core/source/waveform.hpp"
#include "core/coupling/conducted.hpp"
#include "core/coupling/filter.hpp"
#include "core/coupling/lisn.hpp"
#include "core/coupling/network.hpp"
#include "core/receiver/detector.hpp"
#include "core/receiver/receiver.hpp"
#include "core/compliance/limits.hpp"
#include "core/compliance/margins.hpp"
#include "core/compliance/prescan.hpp"
#include "core/compliance/trace.hpp"
#include "core/compliance/trace_comparison.hpp"
#include "core/radio/ambient.hpp"
#include "core/radio/bands.hpp"
#include "core/radio/radiated.hpp"
#include "core/radio/reception.hpp"
#include "core/chain/prediction.hpp"
#include "core/chain/scan_at.hpp"
#include "core/chain/scenario.hpp"
#include "core/chain/spectrum_at.hpp"
#include "core/chain/sweep.hpp"
#include "core/output/compare_output.hpp"
#include "core/output/listing_output.hpp"
#include "core/output/output_dir.hpp"
#include "core/output/plot.hpp"
#include "core/output/prediction_text.hpp"
#include "core/output/report.hpp"
#include "core/output/scan_output.hpp"
#include "core/output/spectrum_output.hpp"
#include "core/output/sweep_output.hpp"
#include "core/output/text_table.hpp"

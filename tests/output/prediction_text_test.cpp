// Tests of core/output/prediction_text: the terminal summary shows the values of the Prediction it
// is given (verdict, worst margin at two decimals, the band plan of the scenario's region), colours
// only when asked (ECMA-48 SGR sequences), and names the report folder.
// The scenario is the invented example examples/greenhouse-buck.toml.
#include <doctest/doctest.h>

#include <fmt/format.h>

#include <string>

#include "core/chain/prediction.hpp"
#include "core/chain/scenario.hpp"
#include "core/output/prediction_text.hpp"
#include "core/output/report.hpp"

using namespace spurcast;

namespace {

const Prediction& example_prediction() {
  static const Prediction prediction =
      predict(load_scenario(std::string(SPURCAST_SOURCE_DIR) + "/examples/greenhouse-buck.toml", locate_shipped_data()));
  return prediction;
}

}  // namespace

TEST_CASE("prediction_summary: verdict, worst margin and band lines from the prediction") {
  const Prediction& p = example_prediction();
  REQUIRE(p.margins.worst.has_value());
  const std::string text = prediction_summary(p, "out", false);
  CHECK(text.rfind(p.scenario.title + "\n", 0) == 0);
  // The verdict line carries the report's verdict sentence (what was not computed first, then the
  // worst margin); the greenhouse example fails, everything computed.
  CHECK(text.find("verdict: " + to_string(p.verdict) + " (" + verdict_sentence(p) + ")\n") != std::string::npos);
  CHECK(text.find(fmt::format("verdict: fail (a limit is exceeded: worst margin \xE2\x88\x92{:.1f} dB (",
                              -p.margins.worst->margin_db)) != std::string::npos);
  CHECK(text.find("\nworst margin per detector of the limit line:\n") != std::string::npos);
  CHECK(text.find("\nfive worst frequencies:\n") != std::string::npos);
  for (const BandReception& b : p.reception) CHECK(text.find("\n  " + b.band.name + " ") != std::string::npos);
  CHECK(text.find("\x1b[") == std::string::npos);
  const std::string ending = "\nreport written to out/ (open out/report.html)\n";
  CHECK(text.substr(text.size() - ending.size()) == ending);
}

TEST_CASE("prediction_summary: colour wraps the title bold and the verdict in its colour") {
  const Prediction& p = example_prediction();
  const std::string text = prediction_summary(p, "out", true);
  CHECK(text.rfind("\x1b[1m" + p.scenario.title + "\x1b[0m\n", 0) == 0);
  const std::string code = p.verdict == Verdict::pass ? "32" : p.verdict == Verdict::marginal ? "33" : "31";
  CHECK(text.find("verdict: \x1b[" + code + "m" + to_string(p.verdict) + "\x1b[0m") != std::string::npos);
}

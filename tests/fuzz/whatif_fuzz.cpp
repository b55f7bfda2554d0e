// libFuzzer target: the what-if server's request handler (core/output/whatif.hpp), called directly
// with no sockets. The first byte picks the method, path, Host and Origin; the rest is the body.
// Contract checked beyond "no crash": every answer has one of the statuses the handler documents,
// and every JSON answer parses, an error one with an "error" string. An evaluation is asked as
// /api/scenario.toml, which runs the same body parsing, key checks, value parsing and scenario
// re-reading as /api/evaluate but not the prediction: the chain's run time grows as 1/f0 (seconds
// for a 150 Hz source), which the smoke's 10 s timeout would report although it is no fault.
#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <memory>
#include <string>

#include <nlohmann/json.hpp>

#include "core/input/toml_reader.hpp"
#include "core/output/whatif.hpp"

namespace {

// An invented scenario (one filter stage, band B, the shipped class B line).
constexpr const char* scenario_text = R"(title = "fuzz scenario"
[switching]
frequency = "400 kHz"
duty = 0.3
amplitude = "24 V"
current = "2 A"
rise = "10 ns"
fall = "10 ns"
ringing = { frequency = "90 MHz", decay = "15 ns", amplitude = 0.2 }
[coupling]
input_capacitance = "10 uF"
parasitic_capacitance = "20 pF"
[[filter]]
kind = "lc"
inductance = "10 uH"
capacitance = "2.2 uF"
[receiver]
bands = ["B"]
[limits]
files = ["cispr32-class-b-conducted"]
[broadcast]
region = 1
distance = "3 m"
environment = "residential"
)";

const spurcast::WhatIfSession& session() {
  static const std::unique_ptr<spurcast::WhatIfSession> s = [] {
    auto made = std::make_unique<spurcast::WhatIfSession>(spurcast::parse_toml_text(scenario_text, "fuzz.toml"),
                                                          "fuzz.toml", ".", spurcast::locate_shipped_data());
    made->set_port(8470);
    return made;
  }();
  return *s;
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size < 1) return 0;
  const std::uint8_t pick = data[0];
  spurcast::WhatIfRequest request;
  static const char* const paths[] = {"/api/scenario.toml", "/api/scenario", "/", "/api/evaluate", "/nowhere"};
  const char* path = paths[pick % 5];
  request.path = std::string(path) == "/api/evaluate" ? "/api/scenario.toml" : path;
  request.method = (pick & 0x08) ? "GET" : "POST";
  request.host = (pick & 0x10) ? "localhost:8470" : ((pick & 0x20) ? "evil.example:8470" : "127.0.0.1:8470");
  if (pick & 0x40) request.origin = (pick & 0x80) ? "http://127.0.0.1:8470" : "null";
  request.body.assign(reinterpret_cast<const char*>(data + 1), size - 1);

  const spurcast::WhatIfResponse response = session().handle(request);
  switch (response.status) {
    case 200: case 400: case 403: case 404: case 405: case 413: case 503: break;
    default: std::abort();  // 500 is an exception the handler did not expect
  }
  if (response.content_type == "application/json") {
    const nlohmann::json body = nlohmann::json::parse(response.body, nullptr, false);
    if (body.is_discarded()) std::abort();
    if (response.status != 200 && !(body.contains("error") && body["error"].is_string())) std::abort();
  }
  return 0;
}

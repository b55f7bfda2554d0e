// The what-if server (core/output/whatif.hpp, whatif_server.hpp): started in-process on an ephemeral
// loopback port and asked through cpp-httplib's client, as a browser or a script would. The answer to
// an edit is checked against `spurcast predict` run on a copy of the scenario with the same value
// written into the file; the security rules against requests a foreign page could send.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <string>
#include <thread>
#include <unistd.h>
#include <utility>
#include <vector>

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include "cli_support.hpp"
#include "core/chain/scenario.hpp"
#include "core/input/toml_reader.hpp"
#include "core/input/units.hpp"
#include "core/output/whatif_server.hpp"

// Last: <httplib.h> pulls in <resolv.h> and <signal.h>, whose macros (_res, si_value) clash with Eigen.
#include <httplib.h>

namespace {

namespace fs = std::filesystem;
using nlohmann::json;
using spurcast::test::fresh_directory;
using spurcast::test::read_text;
using spurcast::test::run_cli;
using spurcast::test::write_text;

const std::string example_dir = std::string(SPURCAST_SOURCE_DIR) + "/examples";
const std::string example = example_dir + "/greenhouse-buck.toml";
// summary.json rounds dB to 0.01 (core/output/report.hpp): two writers of one value agree within it.
constexpr double rounding_tolerance_db = 0.005 + 1e-9;

/// A server on 127.0.0.1 with an ephemeral port, serving in a thread for the life of the object.
struct RunningServer {
  spurcast::WhatIfServer server{spurcast::WhatIfSession(spurcast::parse_toml_file(example, "scenario file"), example, example_dir, spurcast::locate_shipped_data())};
  int port = server.bind(0);
  std::thread thread{[this] { server.listen(); }};
  ~RunningServer() {
    server.stop();
    thread.join();
  }
  [[nodiscard]] httplib::Client client() const {
    httplib::Client c("127.0.0.1", port);
    c.set_read_timeout(60, 0);
    return c;
  }
  [[nodiscard]] std::string host() const { return "127.0.0.1:" + std::to_string(port); }
};

/// `spurcast predict --json` on a copy of the example with `from` replaced by `to` in its text; the
/// report folder it wrote in `report_dir` when asked.
json predict_edited(const std::vector<std::pair<std::string, std::string>>& edits, const std::string& name,
                    fs::path* report_dir = nullptr) {
  const fs::path dir = fresh_directory("spurcast-whatif-", name);
  std::string text = read_text(example);
  for (const auto& [from, to] : edits) {
    const auto at = text.find(from);
    REQUIRE(at != std::string::npos);
    text.replace(at, from.size(), to);
  }
  write_text(dir / "edited.toml", text);
  // The limit files are named relative to the limits folder, so the copy needs nothing beside it.
  const auto run = run_cli(dir, {"predict", "edited.toml", "-o", "report", "--json"}, dir);
  REQUIRE_MESSAGE((run.exit_code == 0 || run.exit_code == 1), run.err);
  if (report_dir) *report_dir = dir / "report";
  return json::parse(run.out);
}

/// The text of each <text> element of an SVG or HTML document, in order, with the entities of XML
/// (and &nbsp;, which an HTML serializer writes) read back, so a plot and the page's copy of it compare.
std::vector<std::string> svg_texts(const std::string& document) {
  std::vector<std::string> texts;
  for (std::size_t at = document.find("<text"); at != std::string::npos; at = document.find("<text", at + 1)) {
    const std::size_t open = document.find('>', at) + 1;
    const std::string raw = document.substr(open, document.find("</text>", open) - open);
    std::string text;
    for (std::size_t i = 0; i < raw.size(); ++i) {
      bool replaced = false;
      for (const auto& [entity, character] : std::vector<std::pair<std::string, std::string>>{
               {"&amp;", "&"}, {"&lt;", "<"}, {"&gt;", ">"}, {"&quot;", "\""}, {"&apos;", "'"}, {"&#39;", "'"},
               {"&nbsp;", "\xC2\xA0"}}) {
        if (raw.compare(i, entity.size(), entity) == 0) {
          text += character;
          i += entity.size() - 1;
          replaced = true;
          break;
        }
      }
      if (!replaced) text += raw[i];
    }
    texts.push_back(text);
  }
  return texts;
}

json error_of(const httplib::Result& result) {
  REQUIRE(result);
  CHECK(result->get_header_value("Content-Type") == "application/json");
  const json body = json::parse(result->body);
  REQUIRE(body.contains("error"));
  return body["error"];
}

}  // namespace

TEST_CASE("evaluate answers what predict gives for the scenario with the same value written in the file") {
  RunningServer s;
  httplib::Client client = s.client();
  const auto result = client.Post("/api/evaluate", R"({"set": {"switching.frequency": "1.9 MHz", "coupling.parasitic_capacitance": "50 pF"}})",
                                  "application/json");
  REQUIRE(result);
  REQUIRE(result->status == 200);
  const json answer = json::parse(result->body);

  // The same edit made by hand in a copy of the file, run through the CLI.
  fs::path report;
  const json expected = predict_edited({{"frequency = \"220 kHz\"", "frequency = \"1.9 MHz\""},
                                        {"parasitic_capacitance = \"35 pF\"", "parasitic_capacitance = \"50 pF\""}},
                                       "predict", &report);

  CHECK(answer["verdict"] == expected["verdict"]);
  REQUIRE(answer["worst_margin_db"].size() == expected["worst_margin_db"].size());
  REQUIRE(!expected["worst_margin_db"].empty());
  for (const auto& [detector, margin] : expected["worst_margin_db"].items()) {
    INFO(detector);
    CHECK(std::abs(answer["worst_margin_db"][detector].get<double>() - margin.get<double>()) < rounding_tolerance_db);
  }
  CHECK(answer["worst"]["frequency_hz"] == expected["worst"]["frequency_hz"]);
  REQUIRE(answer["bands"].size() == expected["bands"].size());
  for (std::size_t i = 0; i < expected["bands"].size(); ++i) {
    CHECK(answer["bands"][i]["name"] == expected["bands"][i]["name"]);
    CHECK(answer["bands"][i]["verdict"] == expected["bands"][i]["verdict"]);
  }
  // One plot per band scanned, byte for byte the SVG predict wrote for that band.
  REQUIRE(answer["plots"].size() == expected["scans"].size());
  REQUIRE(!expected["scans"].empty());
  for (std::size_t i = 0; i < expected["scans"].size(); ++i) {
    const std::string band = expected["scans"][i]["band"].get<std::string>();
    INFO(band);
    CHECK(answer["plots"][i]["band"] == band);
    CHECK(answer["plots"][i]["file"] == "scan-" + band + ".svg");
    CHECK(answer["plots"][i]["svg"].get<std::string>() == read_text(report / ("scan-" + band + ".svg")));
  }
  // Apart from "plots", the answer has summary.json's members in its order.
  std::vector<std::string> answer_keys, expected_keys;
  const nlohmann::ordered_json answer_in_order = nlohmann::ordered_json::parse(result->body);
  const nlohmann::ordered_json summary_in_order = nlohmann::ordered_json::parse(read_text(report / "summary.json"));
  for (const auto& [key, value] : answer_in_order.items()) {
    (void)value;
    if (key != "plots") answer_keys.push_back(key);
  }
  for (const auto& [key, value] : summary_in_order.items()) {
    (void)value;
    expected_keys.push_back(key);
  }
  CHECK(answer_keys == expected_keys);
  // The edit moved the answer: the unedited scenario's worst frequency is its 220 kHz fundamental.
  const auto base = client.Post("/api/evaluate", "{}", "application/json");
  REQUIRE(base);
  CHECK(json::parse(base->body)["worst"]["frequency_hz"].get<double>() != doctest::Approx(1.9e6));
}

TEST_CASE("the page and the editable keys are served; the scenario download carries the edit") {
  RunningServer s;
  httplib::Client client = s.client();
  // The page itself (core/output/whatif_page.cpp): served whole, inline, naming no other host.
  const auto page = client.Get("/");
  REQUIRE(page);
  CHECK(page->status == 200);
  CHECK(page->get_header_value("Content-Type") == "text/html; charset=utf-8");
  CHECK(page->body.find("<title>spurcast what-if</title>") != std::string::npos);
  // Nothing fetched from elsewhere: no address of another host in the page.
  CHECK(page->body.find("http://") == std::string::npos);
  CHECK(page->body.find("https://") == std::string::npos);

  const auto scenario = client.Get("/api/scenario");
  REQUIRE(scenario);
  const json keys = json::parse(scenario->body)["keys"];
  REQUIRE(!keys.empty());
  CHECK(keys[0]["key"] == "switching.frequency");
  CHECK(keys[0]["value"] == "220 kHz");
  CHECK(keys[0]["unit"] == "Hz");
  CHECK(keys[0]["si_value"].get<double>() == doctest::Approx(220e3));
  bool filter_key = false;
  for (const json& k : keys) {
    if (k["key"] == "filter.3.inductance") filter_key = k["value"] == "22 uH";
    CHECK(k["key"].get<std::string>().find("file") == std::string::npos);
  }
  CHECK(filter_key);

  const auto saved = client.Post("/api/scenario.toml", R"({"set": {"filter.3.inductance": "47 uH"}})", "application/json");
  REQUIRE(saved);
  REQUIRE(saved->status == 200);
  const spurcast::Scenario edited = spurcast::scenario_from_text(saved->body, "saved.toml", example_dir, spurcast::locate_shipped_data());
  const spurcast::Scenario original = spurcast::load_scenario(example, spurcast::locate_shipped_data());
  REQUIRE(edited.filters.size() == original.filters.size());
  bool edited_stage = false;
  for (const spurcast::FilterStage& stage : edited.filters) {
    CHECK(stage.inductance_h != doctest::Approx(22e-6));
    edited_stage = edited_stage || stage.inductance_h == doctest::Approx(47e-6);
  }
  CHECK(edited_stage);
  CHECK(edited.switching->frequency_hz == doctest::Approx(original.switching->frequency_hz));
}

TEST_CASE("a foreign Host or Origin is refused (DNS rebinding)") {
  RunningServer s;
  httplib::Client client = s.client();
  const std::string port = std::to_string(s.port);
  const auto host = client.Get("/api/scenario", {{"Host", "attacker.example:" + port}});
  REQUIRE(host);
  CHECK(host->status == 403);
  CHECK(error_of(host) == "refused: the Host header must be 127.0.0.1:" + port + " or localhost:" + port +
                              ", found \"attacker.example:" + port + "\"");
  // The right name with another port is foreign too.
  const auto other_port = client.Get("/", {{"Host", "localhost:1"}});
  REQUIRE(other_port);
  CHECK(other_port->status == 403);

  const auto origin = client.Post("/api/evaluate", {{"Origin", "http://attacker.example:" + port}}, "{}", "application/json");
  REQUIRE(origin);
  CHECK(origin->status == 403);
  CHECK(error_of(origin) == "refused: the Origin must be http://127.0.0.1:" + port + " or http://localhost:" + port +
                                ", found \"http://attacker.example:" + port + "\"");
  // Our own origin, by either name, is served.
  const auto own = client.Post("/api/evaluate", {{"Origin", "http://localhost:" + port}}, "{}", "application/json");
  REQUIRE(own);
  CHECK(own->status == 200);
}

TEST_CASE("an oversize body, malformed JSON, an unknown key, a bad value and a file key are JSON errors") {
  RunningServer s;
  httplib::Client client = s.client();

  const std::string huge = R"({"set": {"switching.frequency": ")" + std::string(70 * 1024, '9') + R"( Hz"}})";
  const auto oversize = client.Post("/api/evaluate", huge, "application/json");
  REQUIRE(oversize);
  CHECK(oversize->status == 413);
  CHECK(error_of(oversize) == "request body over 65536 bytes");

  const auto malformed = client.Post("/api/evaluate", R"({"set": {"switching.frequency": )", "application/json");
  REQUIRE(malformed);
  CHECK(malformed->status == 400);
  CHECK(error_of(malformed) ==
        "malformed JSON: [json.exception.parse_error.101] parse error at line 1, column 33: syntax error while parsing "
        "value - unexpected end of input; expected '[', '{', or a literal");

  const auto unknown = client.Post("/api/evaluate", R"({"set": {"switching.frequncy": "1 MHz"}})", "application/json");
  REQUIRE(unknown);
  CHECK(unknown->status == 400);
  CHECK(error_of(unknown) == "'switching.frequncy': " + example +
                                 ": unknown key 'frequncy' in [switching]; did you mean 'frequency'?");

  const auto bad = client.Post("/api/evaluate", R"({"set": {"switching.rise": "fast"}})", "application/json");
  REQUIRE(bad);
  CHECK(bad->status == 400);
  CHECK(error_of(bad) == "'switching.rise': expected a time (e.g. \"12 ns\"), found \"fast\"");

  for (const char* key : {"limits.files", "capture.file", "broadcast.plan", "filter.1.elements"}) {
    INFO(key);
    const auto file = client.Post("/api/evaluate", std::string(R"({"set": {")") + key + R"(": "/etc/passwd"}})",
                                  "application/json");
    REQUIRE(file);
    CHECK(file->status == 400);
    CHECK(error_of(file) == std::string("'") + key +
                                "': names a file; the what-if server takes no file or path from a request");
  }

  const auto extra = client.Post("/api/evaluate", R"({"set": {}, "write": "x.toml"})", "application/json");
  REQUIRE(extra);
  CHECK(extra->status == 400);
  CHECK(error_of(extra) == "unknown request key 'write' (expected \"set\")");
  // The server is still there after every refusal.
  const auto after = client.Post("/api/evaluate", "{}", "application/json");
  REQUIRE(after);
  CHECK(after->status == 200);
}

TEST_CASE("a body that is not UTF-8 is a 400 naming the first bad byte, never a 500") {
  RunningServer s;
  httplib::Client client = s.client();
  // The byte 0x99 stands at offset 11: {"set": {"l is 11 bytes. nlohmann's own parse error would
  // quote the byte, and dumping that message threw (type_error 316), which became a 500.
  const std::string body = "{\"set\": {\"l\x99mits.files\": \"x\"}}";
  const auto answer = client.Post("/api/evaluate", body, "application/json");
  REQUIRE(answer);
  CHECK(answer->status == 400);
  CHECK(error_of(answer) == "expected UTF-8 text in the request body, found byte 0x99 at byte offset 11 that is not valid UTF-8");
  // A UTF-8 sequence cut short (the lead byte of a 3-byte sequence followed by a quote) counts at its lead byte.
  const auto cut = client.Post("/api/scenario.toml", "{\"set\": {\"switching.frequency\": \"1 \xe2\x82\"}}", "application/json");
  REQUIRE(cut);
  CHECK(cut->status == 400);
  CHECK(error_of(cut) == "expected UTF-8 text in the request body, found byte 0xe2 at byte offset 35 that is not valid UTF-8");
  // A number beyond double range is nlohmann's out_of_range 406, not a parse_error: also a 400.
  const auto huge = client.Post("/api/evaluate", R"({"set": {"switching.frequency": 21e308}})", "application/json");
  REQUIRE(huge);
  CHECK(huge->status == 400);
  CHECK(error_of(huge) == "malformed JSON: [json.exception.out_of_range.406] number overflow parsing '21e308'");
}

TEST_CASE("request text that is not UTF-8 is echoed in an error with U+FFFD in place of the bad bytes") {
  spurcast::WhatIfSession session(spurcast::parse_toml_file(example, "scenario file"), example, example_dir,
                                  spurcast::locate_shipped_data());
  session.set_port(8470);
  const auto answer = [&](const std::string& path, const std::string& host) {
    const spurcast::WhatIfResponse r = session.handle({"GET", path, host, std::nullopt, ""});
    CHECK(r.content_type == "application/json");
    return std::pair{r.status, json::parse(r.body).at("error").get<std::string>()};
  };
  const std::string replacement = "\xef\xbf\xbd";  // U+FFFD in UTF-8
  CHECK(answer("/no\xffwhere", "127.0.0.1:8470") == std::pair{404, "no such page: /no" + replacement + "where"});
  CHECK(answer("/", "h\xc3:8470") ==
        std::pair{403, "refused: the Host header must be 127.0.0.1:8470 or localhost:8470, found \"h" + replacement + ":8470\""});
  // whatif_apply, called as a library function, refuses the same text with an Error rather than
  // nlohmann's parse_error.
  CHECK_THROWS_WITH_AS((void)spurcast::whatif_apply(spurcast::parse_toml_file(example, "scenario file"), example,
                                                    example_dir, spurcast::locate_shipped_data(), "{\"\xed\xa0\x80\": 1}"),
                       "expected UTF-8 text in the \"set\" object, found byte 0xed at byte offset 2 that is not valid UTF-8",
                       spurcast::Error);
  CHECK_THROWS_WITH_AS((void)spurcast::whatif_apply(spurcast::parse_toml_file(example, "scenario file"), example,
                                                    example_dir, spurcast::locate_shipped_data(), "[1]"),
                       "expected \"set\" to be an object of scenario keys and values", spurcast::Error);
}

TEST_CASE("the server listens on the loopback address 127.0.0.1 only") {
  RunningServer s;
  // 127.0.0.2 is the loopback interface too (127.0.0.0/8, RFC 1122 §3.2.1.3): a server bound to every
  // address (0.0.0.0) answers there, one bound to 127.0.0.1 alone does not.
  httplib::Client elsewhere("127.0.0.2", s.port);
  elsewhere.set_connection_timeout(2, 0);
  const auto refused = elsewhere.Get("/", {{"Host", s.host()}});
  CHECK(!refused);
  const auto served = s.client().Get("/", {{"Host", s.host()}});
  REQUIRE(served);
  CHECK(served->status == 200);
  // A second server cannot take the same port (no SO_REUSEPORT sharing): the message names the address.
  spurcast::WhatIfServer second{spurcast::WhatIfSession(spurcast::parse_toml_file(example, "scenario file"), example, example_dir, spurcast::locate_shipped_data())};
  CHECK_THROWS_WITH_AS((void)second.bind(s.port),
                       ("cannot listen on 127.0.0.1:" + std::to_string(s.port) + " (in use, or not allowed)").c_str(),
                       spurcast::Error);
}

TEST_CASE("the page in a real browser shows what predict gives for a changed frequency") {
  const std::string chromium = spurcast::test::find_chromium();
  if (chromium.empty()) {
    MESSAGE("skipped: headless chromium not installed (apt-get install -y chromium)");
    return;
  }
  RunningServer s;
  const fs::path dir = fresh_directory("spurcast-whatif-", "browser");
  fs::create_directories(dir / "profile");
  // The page applies the link's change to its field, posts it and draws the answer; --dump-dom prints
  // the document once the page's fetches are done (virtual time).
  const std::string url = "http://127.0.0.1:" + std::to_string(s.port) + "/#switching.frequency=1.9%20MHz";
  const std::string command = chromium +
                              " --headless --no-sandbox --disable-gpu --disable-quic --no-first-run "
                              "--disable-background-networking --disable-component-update --disable-sync "
                              "--virtual-time-budget=20000 --user-data-dir=" +
                              spurcast::test::shell_quote((dir / "profile").string()) + " --dump-dom " +
                              spurcast::test::shell_quote(url) + " >" +
                              spurcast::test::shell_quote((dir / "dom.html").string()) + " 2>/dev/null";
  REQUIRE(std::system(command.c_str()) == 0);
  const std::string dom = read_text(dir / "dom.html");
  fs::path report;
  const json expected = predict_edited({{"frequency = \"220 kHz\"", "frequency = \"1.9 MHz\""}}, "browser-predict", &report);
  REQUIRE(!expected["worst_margin_db"].empty());
  for (const auto& [detector, margin] : expected["worst_margin_db"].items()) {
    // The page shows margins to 0.1 dB.
    const std::string cell = "data-detector=\"" + detector + "\">" + fmt::format("{:.1f}", margin.get<double>()) + "<";
    INFO(cell);
    CHECK(dom.find(cell) != std::string::npos);
  }
  for (const json& band : expected["bands"]) {
    const std::string row = "data-band=\"" + band["name"].get<std::string>() + "\"><td>" +
                            band["name"].get<std::string>() + "</td><td><span class=\"tag " +
                            band["verdict"].get<std::string>() + "\">";
    INFO(row);
    CHECK(dom.find(row) != std::string::npos);
  }
  // Each band's plot as the page drew it says what predict's scan-<band>.svg says: the same title,
  // ticks, legend and worst readings (frequency, detector, margin).
  REQUIRE(!expected["scans"].empty());
  for (const json& scan : expected["scans"]) {
    const std::string band = scan["band"].get<std::string>();
    const auto figure = dom.find("<figure data-plot-band=\"" + band + "\">");
    REQUIRE(figure != std::string::npos);
    const std::string drawn = dom.substr(figure, dom.find("</figure>", figure) - figure);
    CHECK(drawn.find("<svg") != std::string::npos);
    const std::vector<std::string> texts = svg_texts(drawn);
    CHECK(texts.size() > 5);
    CHECK(texts == svg_texts(read_text(report / ("scan-" + band + ".svg"))));
  }
}

namespace {

/// Runs the what-if page in headless chromium with `harness` (a <script> whose SCENARIO and ANSWERS
/// stand for the page's GET /api/scenario answer and the evaluate answers by state) ahead of the
/// page's own script, and returns the JSON log the harness leaves URI-encoded in <pre id="result">.
json run_page_harness(const std::string& chromium, std::string harness, const json& scenario, const json& answers,
                      const std::string& name) {
  // Inside a <script>, '<' only occurs in JSON strings, where \u003c is the same character.
  const auto script_json = [](const json& value) {
    std::string text;
    for (char c : value.dump()) text += c == '<' ? std::string("\\u003c") : std::string(1, c);
    return text;
  };
  harness.replace(harness.find("SCENARIO"), 8, script_json(scenario));
  harness.replace(harness.find("ANSWERS"), 7, script_json(answers));
  std::string page = spurcast::whatif_page_html();
  page.insert(page.find("<script>"), harness);
  const fs::path dir = fresh_directory("spurcast-whatif-", name);
  fs::create_directories(dir / "profile");
  write_text(dir / "page.html", page);
  const std::string command = chromium +
                              " --headless --no-sandbox --disable-gpu --disable-quic --no-first-run "
                              "--disable-background-networking --disable-component-update --disable-sync "
                              "--virtual-time-budget=10000 --user-data-dir=" +
                              spurcast::test::shell_quote((dir / "profile").string()) + " --dump-dom " +
                              spurcast::test::shell_quote("file://" + (dir / "page.html").string()) + " >" +
                              spurcast::test::shell_quote((dir / "dom.html").string()) + " 2>/dev/null";
  REQUIRE(std::system(command.c_str()) == 0);
  const std::string dom = read_text(dir / "dom.html");
  const auto at = dom.find("<pre id=\"result\">");
  REQUIRE(at != std::string::npos);
  const std::string encoded = dom.substr(at + 17, dom.find("</pre>", at) - at - 17);
  std::string text;  // encodeURIComponent's %XX back to bytes
  for (std::size_t i = 0; i < encoded.size(); ++i) {
    if (encoded[i] == '%' && i + 2 < encoded.size()) {
      text += static_cast<char>(std::stoi(encoded.substr(i + 1, 2), nullptr, 16));
      i += 2;
    } else {
      text += encoded[i];
    }
  }
  return json::parse(text);
}

}  // namespace

// The page's own script with the network replaced by a stand-in (added by the test before it): each
// evaluation answers what the session answers for the same request, after a delay, so the page's
// handling of a slow path can be watched in virtual time.
constexpr const char* slow_path_harness = R"js(<script>
"use strict";
(function () {
  const scenario = SCENARIO;
  const answers = ANSWERS;
  const log = window.spurcastTest = {calls: [], active: 0, most: 0, statuses: [], marks: {}};
  window.fetch = function (path, options) {
    if (path === "/api/scenario") return Promise.resolve(new Response(JSON.stringify(scenario)));
    const key = JSON.parse(options.body).set["switching.frequency"] || "";
    log.calls.push(key);
    log.active += 1;
    log.most = Math.max(log.most, log.active);
    // The unchanged scenario answers at once (the exact path), every change after 400 ms (a slow one).
    return new Promise(function (resolve) {
      setTimeout(function () {
        log.active -= 1;
        resolve(new Response(JSON.stringify(answers[key]), {status: 200, headers: {"Content-Type": "application/json"}}));
      }, key === "" ? 10 : 400);
    });
  };
  function cells() {
    return Array.from(document.querySelectorAll("#detectors td[data-detector]")).map(function (td) {
      return td.getAttribute("data-detector") + "=" + td.textContent;
    });
  }
  function mark(name) {
    log.marks[name] = {status: document.getElementById("status").textContent, cells: cells(),
                       stale: document.getElementById("answer").classList.contains("stale")};
  }
  window.addEventListener("load", function () {
    new MutationObserver(function () {
      log.statuses.push(document.getElementById("status").textContent);
    }).observe(document.getElementById("status"), {childList: true, characterData: true, subtree: true});
    setTimeout(function () {
      mark("first");
      const field = document.querySelector("input[type=text][data-key='switching.frequency']");
      ["1 MHz", "1.5 MHz", "1.9 MHz"].forEach(function (value, i) {
        setTimeout(function () { field.value = value; field.dispatchEvent(new Event("change")); }, 20 * i);
      });
      setTimeout(mark, 250, "computing");
      setTimeout(mark, 500, "older answer in");
      setTimeout(function () {
        mark("last");
        const out = document.createElement("pre");
        out.id = "result";
        out.textContent = encodeURIComponent(JSON.stringify(log));
        document.body.appendChild(out);
      }, 1500);
    }, 1000);
  });
})();
</script>
)js";

TEST_CASE("the page computes one change at a time, shows progress on a slow path and draws only the latest") {
  const std::string chromium = spurcast::test::find_chromium();
  if (chromium.empty()) {
    MESSAGE("skipped: headless chromium not installed (apt-get install -y chromium)");
    return;
  }
  spurcast::WhatIfSession session(spurcast::parse_toml_file(example, "scenario file"), example, example_dir,
                                  spurcast::locate_shipped_data());
  session.set_port(8470);
  const auto ask = [&](const std::string& method, const std::string& path, const std::string& body) {
    const spurcast::WhatIfResponse r = session.handle({method, path, "127.0.0.1:8470", std::nullopt, body});
    REQUIRE(r.status == 200);
    return json::parse(r.body);
  };
  json answers;
  answers[""] = ask("POST", "/api/evaluate", R"({"set": {}})");
  for (const char* f : {"1 MHz", "1.9 MHz"}) {
    answers[f] = ask("POST", "/api/evaluate", std::string(R"({"set": {"switching.frequency": ")") + f + "\"}}");
  }
  // The three answers differ, so the page shows which one it drew.
  REQUIRE(answers["1 MHz"]["worst_margin_db"] != answers["1.9 MHz"]["worst_margin_db"]);
  REQUIRE(answers[""]["worst_margin_db"] != answers["1 MHz"]["worst_margin_db"]);
  const auto cells_of = [](const json& answer) {
    std::vector<std::string> cells;
    for (const auto& [detector, margin] : answer["worst_margin_db"].items()) {
      cells.push_back(detector + "=" + fmt::format("{:.1f}", margin.get<double>()));  // the page shows 0.1 dB
    }
    return cells;
  };
  const json log = run_page_harness(chromium, slow_path_harness, ask("GET", "/api/scenario", ""), answers, "slow-path");
  INFO(log.dump());
  // One request at a time: the unchanged scenario, the first change, then only the latest of the
  // two changes made while the first was computing.
  CHECK(log["calls"] == json::array({"", "1 MHz", "1.9 MHz"}));
  CHECK(log["most"] == 1);
  // The fast answer was drawn with no progress shown.
  CHECK(log["marks"]["first"]["cells"] == cells_of(answers[""]));
  CHECK(log["marks"]["first"]["status"] == "");
  // The slow one shows that it is computing, with the answer it will replace dimmed.
  CHECK(log["marks"]["computing"]["status"].get<std::string>().rfind("computing\xE2\x80\xA6 ", 0) == 0);
  CHECK(log["marks"]["computing"]["stale"] == true);
  CHECK(log["marks"]["computing"]["cells"] == cells_of(answers[""]));
  // The answer to the older state came and was not drawn: a newer change was waiting.
  CHECK(log["marks"]["older answer in"]["cells"] == cells_of(answers[""]));
  CHECK(log["marks"]["older answer in"]["stale"] == true);
  // The latest is drawn, and the progress is gone.
  CHECK(log["marks"]["last"]["cells"] == cells_of(answers["1.9 MHz"]));
  CHECK(log["marks"]["last"]["status"] == "");
  CHECK(log["marks"]["last"]["stale"] == false);
  for (const json& status : log["statuses"]) {
    CHECK(status.get<std::string>().find("error") == std::string::npos);
  }
}

// The page's own script with the network replaced by a stand-in: each evaluation answers at once
// with the answer the test prepared for the frequency posted (what the session answers for it, one
// of them made hostile, one without its plots).
constexpr const char* plot_harness = R"js(<script>
"use strict";
(function () {
  const scenario = SCENARIO;
  const answers = ANSWERS;
  const log = window.spurcastTest = {calls: [], marks: {}};
  window.fetch = function (path, options) {
    if (path === "/api/scenario") return Promise.resolve(new Response(JSON.stringify(scenario)));
    const key = JSON.parse(options.body).set["switching.frequency"] || "";
    log.calls.push(key);
    const answer = answers[key];
    return Promise.resolve(answer ? new Response(JSON.stringify(answer), {status: 200})
                                  : new Response(JSON.stringify({error: "no answer prepared for " + key}), {status: 400}));
  };
  function mark(name) {
    const figure = document.querySelector("#plots figure[data-plot-band='B']");
    log.marks[name] = {
      status: document.getElementById("status").textContent,
      cells: Array.from(document.querySelectorAll("#detectors td[data-detector]")).map(function (td) {
        return td.getAttribute("data-detector") + "=" + td.textContent;
      }),
      texts: figure ? Array.from(figure.querySelectorAll("text")).map(function (t) { return t.textContent; }) : null,
      note: figure && figure.querySelector("p") ? figure.querySelector("p").textContent : "",
      markup: figure ? figure.innerHTML : "",
      hostile_ran: window.spurcastHostile || 0
    };
  }
  window.addEventListener("load", function () {
    setTimeout(function () {
      mark("first");
      const slider = document.querySelector("input[type=range][data-key='switching.frequency']");
      slider.value = 1000;  // the right end: four times the scenario's value
      slider.dispatchEvent(new Event("input"));
      setTimeout(function () {
        mark("moved");
        const field = document.querySelector("input[type=text][data-key='switching.frequency']");
        field.value = "1.9 MHz";
        field.dispatchEvent(new Event("change"));
        setTimeout(function () {
          mark("no plots");
          const out = document.createElement("pre");
          out.id = "result";
          out.textContent = encodeURIComponent(JSON.stringify(log));
          document.body.appendChild(out);
        }, 500);
      }, 500);
    }, 1000);
  });
})();
</script>
)js";

// A plot that is not ours: each way an SVG can run script or fetch from elsewhere, around one text.
constexpr const char* hostile_svg =
    R"svg(<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink" onload="window.spurcastHostile=1" viewBox="0 0 100 50">)svg"
    R"svg(<script>window.spurcastHostile=2</script>)svg"
    R"svg(<rect width="10" height="10" onclick="window.spurcastHostile=3" style="fill:url(http://example.invalid/a)"/>)svg"
    R"svg(<foreignObject width="50" height="50"><iframe xmlns="http://www.w3.org/1999/xhtml" src="http://example.invalid/b"></iframe></foreignObject>)svg"
    R"svg(<image href="http://example.invalid/c.png" width="5" height="5"/><use xlink:href="http://example.invalid/d.svg#x"/>)svg"
    R"svg(<a href="javascript:window.spurcastHostile=4"><text x="1" y="20">link</text></a>)svg"
    R"svg(<g fill="url(http://example.invalid/e)"><set attributeName="onmouseover" to="window.spurcastHostile=5"/></g>)svg"
    R"svg(<text x="1" y="40">kept text</text></svg>)svg";

TEST_CASE("the page redraws the plot when the frequency slider moves, and draws only a sanitized SVG") {
  const std::string chromium = spurcast::test::find_chromium();
  if (chromium.empty()) {
    MESSAGE("skipped: headless chromium not installed (apt-get install -y chromium)");
    return;
  }
  spurcast::WhatIfSession session(spurcast::parse_toml_file(example, "scenario file"), example, example_dir,
                                  spurcast::locate_shipped_data());
  session.set_port(8470);
  const auto ask = [&](const std::string& method, const std::string& path, const std::string& body) {
    const spurcast::WhatIfResponse r = session.handle({method, path, "127.0.0.1:8470", std::nullopt, body});
    REQUIRE(r.status == 200);
    return json::parse(r.body);
  };
  // The slider spans a quarter to four times the scenario's 220 kHz (the page's note); its right end
  // is 880 kHz, which the page writes as "880 kHz" in the field and posts.
  const std::string moved = "880 kHz";
  json answers;
  answers[""] = ask("POST", "/api/evaluate", R"({"set": {}})");
  answers[moved] = ask("POST", "/api/evaluate", R"({"set": {"switching.frequency": "880 kHz"}})");
  answers["1.9 MHz"] = ask("POST", "/api/evaluate", R"({"set": {"switching.frequency": "1.9 MHz"}})");
  REQUIRE(answers[""]["plots"].size() == 1);
  REQUIRE(answers[""]["plots"][0]["band"] == "B");
  answers[""]["plots"][0]["svg"] = hostile_svg;
  answers["1.9 MHz"].erase("plots");
  const json log = run_page_harness(chromium, plot_harness, ask("GET", "/api/scenario", ""), answers, "plots");
  INFO(log.dump());
  CHECK(log["calls"] == json::array({"", moved, "1.9 MHz"}));

  // The hostile plot: its text is drawn, nothing that runs or fetches is left, and nothing ran.
  const json& first = log["marks"]["first"];
  CHECK(first["texts"].size() == 1);
  CHECK(first["texts"][0] == "kept text");
  CHECK(first["hostile_ran"] == 0);
  const std::string markup = first["markup"].get<std::string>();
  CHECK(markup.find("<svg") != std::string::npos);
  for (const char* gone : {"script", "onload", "onclick", "foreignObject", "iframe", "<image", "<use", "href",
                           "example.invalid", "javascript", "style", "<set", "onmouseover"}) {
    INFO(gone);
    CHECK(markup.find(gone) == std::string::npos);
  }

  // The slider moved: the plot of band B changed to the one predict draws for 880 kHz.
  fs::path report;
  const json expected = predict_edited({{"frequency = \"220 kHz\"", "frequency = \"880 kHz\""}}, "slider-predict", &report);
  const json& after = log["marks"]["moved"];
  REQUIRE(after["texts"].is_array());
  std::vector<std::string> drawn;
  for (const json& t : after["texts"]) drawn.push_back(t.get<std::string>());
  const std::vector<std::string> predicted = svg_texts(read_text(report / "scan-B.svg"));
  CHECK(drawn == predicted);
  CHECK(after["texts"] != first["texts"]);
  // The worst reading's marker names the frequency predict gives as the worst (4 digits, as the plot).
  const std::string worst = spurcast::format_quantity(expected["worst"]["frequency_hz"].get<double>(),
                                                      spurcast::Dimension::frequency, 4) + " ";
  CHECK(std::any_of(drawn.begin(), drawn.end(), [&](const std::string& t) { return t.rfind(worst, 0) == 0; }));

  // An answer without plots still draws its margins, with a note where the plot would be.
  const json& bare = log["marks"]["no plots"];
  for (const auto& [detector, margin] : answers["1.9 MHz"]["worst_margin_db"].items()) {
    CHECK(std::find(bare["cells"].begin(), bare["cells"].end(),
                    json(detector + "=" + fmt::format("{:.1f}", margin.get<double>()))) != bare["cells"].end());
  }
  CHECK(bare["texts"].empty());
  CHECK(bare["note"] == "no plot of band B in this answer");
  CHECK(bare["status"] == "");
}

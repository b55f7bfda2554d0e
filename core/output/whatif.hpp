#pragma once
/// The what-if page's request handler (docs/design.md §4, `spurcast serve`): a pure function from one
/// HTTP request to one response, with no sockets, so tests and the fuzz target call it directly and
/// the server (whatif_server.hpp) only moves bytes.
///
/// Routes:
///   GET  /                   the page (one HTML document, inline CSS and script, nothing fetched)
///   GET  /api/scenario       the editable keys of the loaded scenario and their current values
///   POST /api/evaluate       {"set": {"switching.frequency": "1.9 MHz", ...}} → the summary, in the
///                            schema of summary.json (summary_json() of core/output/report.hpp)
///                            with one more member, "plots": [{"band": "B", "file": "scan-B.svg",
///                            "svg": "<svg ..."}, ...], per receiver band scanned the SVG that
///                            `predict -o DIR` writes as that file, byte for byte
///   POST /api/scenario.toml  the same body → the changed scenario as TOML text, for the page's
///                            "save as…" browser download (the server never writes a file)
///
/// Security (checked here, before any route): the Host header must be 127.0.0.1:PORT or
/// localhost:PORT and an Origin, when present, http://127.0.0.1:PORT or http://localhost:PORT
/// (a DNS-rebinding page carries its own name in both: 403); bodies over max_request_bytes give 413;
/// keys that name files (capture, limit files, band plans, netlists) are refused, so no path ever
/// comes from a request; every bad key or value is a 400 JSON error naming the key.
///
/// Example:
///   WhatIfSession session(parse_toml_file("examples/greenhouse-buck.toml", "scenario file"), "examples/greenhouse-buck.toml", "examples");
///   session.set_port(8470);
///   const WhatIfResponse r = session.handle({"POST", "/api/evaluate", "127.0.0.1:8470", std::nullopt,
///                                            R"({"set": {"switching.frequency": "1.9 MHz"}})"});
#include <atomic>
#include <cstddef>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "core/input/shipped_data.hpp"
#include "core/input/toml.hpp"

namespace spurcast {

/// The largest request body accepted [bytes]; 413 beyond (judgement: a request sets a few dozen keys).
inline constexpr std::size_t whatif_max_request_bytes = 64 * 1024;
/// Evaluations run at once; 503 with Retry-After beyond (judgement: keeps a 2-core machine usable).
inline constexpr int whatif_max_concurrent_evaluations = 2;

struct WhatIfRequest {
  std::string method;                 ///< "GET", "POST", ...
  std::string path;                   ///< "/api/evaluate" (no query string)
  std::string host;                   ///< the Host header ("" when absent)
  std::optional<std::string> origin;  ///< the Origin header when present
  std::string body;
};

struct WhatIfResponse {
  int status = 200;
  std::string content_type = "application/json";
  std::string body;
  std::optional<int> retry_after_s;  ///< Retry-After header [s] (503 only)
};

/// One editable key as GET /api/scenario lists it.
struct WhatIfKey {
  std::string key;        ///< dotted scenario key ("filter.2.capacitance")
  std::string value;      ///< current value as written ("220 kHz", "0.35", "residential")
  std::string kind;       ///< "quantity" (a string with a unit), "number" (plain) or "choice" (a name)
  std::string unit;       ///< unit_symbol() of a quantity ("Hz", "F"); "" otherwise
  double value_si = 0.0;   ///< the value in SI base units (0 for a choice)
  std::vector<std::string> choices;  ///< for "choice" keys: the values the reader accepts
};

/// The editable keys of `table` present in it, in page order: switching frequency, edges, ringing,
/// coupling capacitances, every numeric value of each [[filter]] stage (not netlist elements),
/// broadcast distance, cable length and environment.
[[nodiscard]] std::vector<WhatIfKey> whatif_keys(const toml::table& table);

/// Whether `key` names a file or a list of files (capture.*, limits.files, broadcast.plan, any
/// key part "file", "files", "plan", "path", "netlist" or "elements"): refused in a request.
[[nodiscard]] bool whatif_key_names_file(const std::string& key);

/// Applies `set` (a JSON object text {"key": value, ...}; Error when it is not UTF-8 JSON) to a copy of `table`: a string value is a
/// quantity in the key's unit (or one of a choice key's names), a number is taken in SI base units.
/// Each key is checked by re-reading the scenario after it is set. Errors name the key:
/// `'switching.frequency': expected a frequency (e.g. "220 kHz"), found "fast"`.
[[nodiscard]] toml::table whatif_apply(const toml::table& table, const std::string& file, const std::string& directory,
                                       const ShippedData& data, const std::string& set_object_json);

class WhatIfSession {
 public:
  /// `table` is the parsed scenario; `file` names it in messages, `directory` resolves its relative
  /// paths, `data` finds the shipped band plans and limit files. Throws Error when the scenario itself is invalid.
  WhatIfSession(toml::table table, std::string file, std::string directory, ShippedData data);

  /// The port the server listens on (0 until bound): the Host and Origin checks compare with it.
  void set_port(int port) { port_ = port; }
  [[nodiscard]] int port() const { return port_; }

  /// Answers one request; never throws (an unexpected exception becomes a 500 JSON error).
  /// Thread-safe: the loaded scenario is read only, every request works on its own copy.
  [[nodiscard]] WhatIfResponse handle(const WhatIfRequest& request) const;

 private:
  [[nodiscard]] WhatIfResponse route(const WhatIfRequest& request) const;
  toml::table table_;
  std::string file_;
  std::string directory_;
  ShippedData data_;
  int port_ = 0;
  /// Evaluations running now (shared by the copies a move leaves behind; the session is moved into its server).
  std::shared_ptr<std::atomic<int>> evaluations_ = std::make_shared<std::atomic<int>>(0);
};

/// The page served at GET / (one HTML document; its script calls the routes above).
[[nodiscard]] const std::string& whatif_page_html();

}  // namespace spurcast

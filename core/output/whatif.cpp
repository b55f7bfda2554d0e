#include "core/output/whatif.hpp"

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include <array>
#include <exception>
#include <sstream>
#include <string_view>
#include <utility>

#include "core/chain/prediction.hpp"
#include "core/chain/scenario.hpp"
#include "core/chain/sweep.hpp"
#include "core/input/error.hpp"
#include "core/input/text.hpp"
#include "core/input/units.hpp"
#include "core/output/plot.hpp"
#include "core/output/report.hpp"

namespace spurcast {

namespace {

using nlohmann::json;

/// Keys whose value is a name, not a quantity, with the names their readers accept.
struct ChoiceKey {
  std::string_view section;
  std::string_view name;
  std::vector<std::string> choices;
};

const std::vector<ChoiceKey>& choice_keys() {
  // The names environment_from_name() (core/radio/ambient.cpp) accepts.
  static const std::vector<ChoiceKey> keys = {
      {"broadcast", "environment", {"city", "residential", "rural", "quiet-rural"}},
  };
  return keys;
}

const ChoiceKey* find_choice_key(const std::string& key) {
  for (const ChoiceKey& c : choice_keys()) {
    if (key == std::string(c.section) + "." + std::string(c.name)) return &c;
  }
  return nullptr;
}

std::string node_text(const toml::node& node) {
  if (const auto* s = node.as_string()) return s->get();
  if (const auto* i = node.as_integer()) return std::to_string(i->get());
  if (const auto* f = node.as_floating_point()) return fmt::format("{:.10g}", f->get());
  return "";
}

void add_key(std::vector<WhatIfKey>& keys, const toml::table& table, const std::string& key, const toml::node* node) {
  if (!node || !(node->is_string() || node->is_number())) return;
  if (const ChoiceKey* choice = find_choice_key(key)) {
    keys.push_back({key, node_text(*node), "choice", "", 0.0, choice->choices});
    return;
  }
  const Dimension dimension = scenario_key_dimension(table, key, "");
  // A string that is not a quantity (a kind, a model name) is not editable here.
  if (node->is_string() && dimension == Dimension::number) return;
  const bool plain = node->is_number();
  const double si = plain ? node->value<double>().value_or(0.0) : parse_quantity(node_text(*node), dimension);
  keys.push_back({key, node_text(*node), plain ? "number" : "quantity", plain ? "" : unit_symbol(dimension), si, {}});
}

WhatIfResponse json_error(int status, const std::string& message) {
  WhatIfResponse r;
  r.status = status;
  // A message may echo request text (a Host, a path, a value cut at 200 bytes) that is not UTF-8:
  // such bytes become U+FFFD instead of making dump() throw (nlohmann type_error 316).
  r.body = json{{"error", message}}.dump(-1, ' ', false, json::error_handler_t::replace) + "\n";
  return r;
}

template <class Json>
WhatIfResponse json_answer(const Json& value) {
  WhatIfResponse r;
  r.body = value.dump(2) + "\n";
  return r;
}

/// Counts an evaluation in for its lifetime; `admitted` false when the bound is reached.
class EvaluationSlot {
 public:
  explicit EvaluationSlot(std::atomic<int>& count) : count_(count) {
    admitted_ = count_.fetch_add(1) < whatif_max_concurrent_evaluations;
  }
  ~EvaluationSlot() { count_.fetch_sub(1); }
  EvaluationSlot(const EvaluationSlot&) = delete;
  EvaluationSlot& operator=(const EvaluationSlot&) = delete;
  [[nodiscard]] bool admitted() const { return admitted_; }

 private:
  std::atomic<int>& count_;
  bool admitted_ = false;
};

/// `text` parsed as JSON; throws Error for text that is not UTF-8 (naming the offset of the first
/// bad byte, since nlohmann's own message would quote the byte itself) or not JSON (RFC 8259 §8.1:
/// JSON text exchanged between systems is UTF-8; from memory).
json parse_request_json(const std::string& text, const char* what) {
  if (const auto bad = first_invalid_utf8_offset(text)) {
    throw Error(fmt::format("expected UTF-8 text in the {}, found byte 0x{:02x} at byte offset {} that is not valid UTF-8",
                            what, static_cast<unsigned char>(text[*bad]), *bad));
  }
  try {
    return json::parse(text);
  } catch (const json::parse_error& e) {
    throw Error(std::string("malformed JSON: ") + e.what());
  } catch (const json::exception& e) {
    // Also out_of_range 406, a number beyond double range ("21e308"), which parse() does not
    // count as a parse error.
    throw Error(std::string("malformed JSON: ") + e.what());
  }
}

/// The "set" object of a request body; throws Error with a message for the client.
std::string set_object_of(const std::string& body) {
  const json request = parse_request_json(body, "request body");
  if (!request.is_object()) throw Error("expected a JSON object such as {\"set\": {\"switching.frequency\": \"1.9 MHz\"}}");
  for (const auto& [name, value] : request.items()) {
    (void)value;
    if (name != "set") throw Error("unknown request key '" + name + "' (expected \"set\")");
  }
  if (!request.contains("set")) return "{}";
  if (!request["set"].is_object()) throw Error("expected \"set\" to be an object of scenario keys and values");
  return request["set"].dump();
}

/// The answer to /api/evaluate: summary.json's members in its order, then `plots`: per receiver
/// band scanned, the SVG that `predict -o DIR` writes as scan-<band>.svg (the same plot functions),
/// so the page redraws the plots from the answer alone.
nlohmann::ordered_json evaluate_answer(const Prediction& prediction) {
  nlohmann::ordered_json answer = nlohmann::ordered_json::parse(summary_json(prediction, {}));
  nlohmann::ordered_json plots = nlohmann::ordered_json::array();
  for (const BandScan& scan : prediction.scans) {
    plots.push_back({{"band", to_string(scan.band)},
                     {"file", readings_plot_file(scan)},
                     {"svg", spectrum_plot_svg(readings_plot(prediction, scan))}});
  }
  answer["plots"] = std::move(plots);
  return answer;
}

}  // namespace

bool whatif_key_names_file(const std::string& key) {
  static const std::array<std::string_view, 7> file_parts = {"file", "files", "plan", "path",
                                                             "netlist", "elements", "circuit_file"};
  std::size_t start = 0;
  bool first = true;
  while (start <= key.size()) {
    const std::size_t dot = key.find('.', start);
    const std::string_view part = std::string_view(key).substr(start, dot == std::string::npos ? std::string::npos : dot - start);
    if (first && part == "capture") return true;
    for (const std::string_view f : file_parts) {
      if (part == f) return true;
    }
    if (dot == std::string::npos) break;
    start = dot + 1;
    first = false;
  }
  return false;
}

std::vector<WhatIfKey> whatif_keys(const toml::table& table) {
  std::vector<WhatIfKey> keys;
  const auto at = [&](std::string_view path) { return table.at_path(path).node(); };
  for (const char* key : {"switching.frequency", "switching.rise", "switching.fall", "switching.rise_10_90",
                          "switching.fall_10_90", "switching.ringing.frequency", "switching.ringing.decay",
                          "switching.ringing.amplitude", "coupling.parasitic_capacitance",
                          "coupling.input_capacitance"}) {
    add_key(keys, table, key, at(key));
  }
  if (const toml::array* filters = table["filter"].as_array()) {
    for (std::size_t i = 0; i < filters->size(); ++i) {
      const toml::table* stage = filters->get(i)->as_table();
      if (!stage) continue;
      for (const auto& [name, node] : *stage) {
        const std::string key = "filter." + std::to_string(i + 1) + "." + std::string(name.str());
        if (name.str() == "kind" || name.str() == "lines" || whatif_key_names_file(key)) continue;
        add_key(keys, table, key, &node);
      }
    }
  }
  for (const char* key : {"broadcast.distance", "broadcast.cable_length", "broadcast.environment"}) {
    add_key(keys, table, key, at(key));
  }
  return keys;
}

toml::table whatif_apply(const toml::table& table, const std::string& file, const std::string& directory,
                         const ShippedData& data,
                         const std::string& set_object_json) {
  const json set = parse_request_json(set_object_json, "\"set\" object");
  if (!set.is_object()) throw Error("expected \"set\" to be an object of scenario keys and values");
  toml::table edited = table;
  for (const auto& [key, value] : set.items()) {
    const std::string named = "'" + key + "': ";
    if (whatif_key_names_file(key)) {
      throw Error(named + "names a file; the what-if server takes no file or path from a request");
    }
    try {
      if (const ChoiceKey* choice = find_choice_key(key)) {
        if (!value.is_string()) throw Error("expected one of the names " + fmt::format("{}", fmt::join(choice->choices, ", ")));
        toml::table* section = edited[choice->section].as_table();
        if (!section) throw Error("the scenario has no [" + std::string(choice->section) + "] section");
        section->insert_or_assign(choice->name, value.get<std::string>());
      } else if (value.is_string()) {
        const std::string text = value.get<std::string>();
        const Dimension dimension = scenario_key_dimension(edited, key, text);
        set_scenario_key(edited, key, parse_quantity(text, dimension), dimension);
      } else if (value.is_number()) {
        const Dimension dimension = scenario_key_dimension(edited, key, "");
        set_scenario_key(edited, key, value.get<double>(), dimension);
      } else {
        throw Error("expected a quantity string such as \"1.9 MHz\" or a number, found " + value.dump());
      }
      // Every section's own reader judges the edited table, so the key is named with its message.
      (void)scenario_from_table(edited, file, directory, data);
    } catch (const Error& e) {
      throw Error(named + e.what());
    }
  }
  return edited;
}

WhatIfSession::WhatIfSession(toml::table table, std::string file, std::string directory, ShippedData data)
    : table_(std::move(table)), file_(std::move(file)), directory_(std::move(directory)), data_(std::move(data)) {
  (void)scenario_from_table(table_, file_, directory_, data_);
}

WhatIfResponse WhatIfSession::handle(const WhatIfRequest& request) const {
  try {
    return route(request);
  } catch (const std::exception& e) {
    return json_error(500, std::string("internal error: ") + e.what());
  } catch (...) {
    return json_error(500, "internal error");
  }
}

WhatIfResponse WhatIfSession::route(const WhatIfRequest& request) const {
  // DNS rebinding: a foreign page that resolves its own name to 127.0.0.1 still sends that name
  // as Host and its own Origin, so both are compared with the loopback names and our port.
  const std::string port = std::to_string(port_);
  if (request.host != "127.0.0.1:" + port && request.host != "localhost:" + port) {
    return json_error(403, "refused: the Host header must be 127.0.0.1:" + port + " or localhost:" + port +
                               ", found \"" + request.host.substr(0, 200) + "\"");
  }
  if (request.origin && *request.origin != "http://127.0.0.1:" + port && *request.origin != "http://localhost:" + port) {
    return json_error(403, "refused: the Origin must be http://127.0.0.1:" + port + " or http://localhost:" + port +
                               ", found \"" + request.origin->substr(0, 200) + "\"");
  }
  if (request.body.size() > whatif_max_request_bytes) {
    return json_error(413, "request body of " + std::to_string(request.body.size()) + " bytes; at most " +
                               std::to_string(whatif_max_request_bytes) + " are accepted");
  }

  if (request.path == "/") {
    if (request.method != "GET") return json_error(405, "use GET for /");
    WhatIfResponse r;
    r.content_type = "text/html; charset=utf-8";
    r.body = whatif_page_html();
    return r;
  }
  if (request.path == "/api/scenario") {
    if (request.method != "GET") return json_error(405, "use GET for /api/scenario");
    json keys = json::array();
    for (const WhatIfKey& k : whatif_keys(table_)) {
      json entry{{"key", k.key}, {"value", k.value}, {"kind", k.kind}, {"unit", k.unit}, {"si_value", k.value_si}};
      if (!k.choices.empty()) entry["choices"] = k.choices;
      keys.push_back(entry);
    }
    const toml::node* title = table_.get("title");
    return json_answer(json{{"scenario", file_}, {"title", title ? node_text(*title) : ""}, {"keys", keys}});
  }
  if (request.path == "/api/evaluate" || request.path == "/api/scenario.toml") {
    if (request.method != "POST") return json_error(405, "use POST for " + request.path);
    EvaluationSlot slot(*evaluations_);
    if (!slot.admitted()) {
      WhatIfResponse r = json_error(503, "busy: " + std::to_string(whatif_max_concurrent_evaluations) +
                                             " evaluations are running; try again");
      r.retry_after_s = 1;
      return r;
    }
    toml::table edited;
    try {
      edited = whatif_apply(table_, file_, directory_, data_, set_object_of(request.body));
    } catch (const Error& e) {
      return json_error(400, e.what());
    }
    if (request.path == "/api/scenario.toml") {
      std::ostringstream out;
      out << "# " << file_ << " with the what-if page's changes (spurcast serve)\n" << edited << "\n";
      WhatIfResponse r;
      r.content_type = "application/toml; charset=utf-8";
      r.body = out.str();
      return r;
    }
    try {
      const Prediction prediction = predict(scenario_from_table(edited, file_, directory_, data_));
      return json_answer(evaluate_answer(prediction));
    } catch (const Error& e) {
      return json_error(400, e.what());
    }
  }
  return json_error(404, "no such page: " + request.path.substr(0, 200));
}

}  // namespace spurcast

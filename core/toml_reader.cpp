#include "core/toml_reader.hpp"

#include <algorithm>
#include <cmath>
#include <fstream>
#include <sstream>

namespace spurcast {

SourcePosition position_of(const toml::node& node, const std::string& file) {
  const auto& begin = node.source().begin;
  return SourcePosition{file, static_cast<int>(begin.line), static_cast<int>(begin.column)};
}

namespace {

toml::table parse_or_throw(std::string_view text, const std::string& name) {
  try {
    return toml::parse(text, name);
  } catch (const toml::parse_error& e) {
    const auto& begin = e.source().begin;
    throw Error(SourcePosition{name, static_cast<int>(begin.line), static_cast<int>(begin.column)},
                "invalid TOML: " + std::string(e.description()));
  }
}

std::string type_name(const toml::node& node) {
  switch (node.type()) {
    case toml::node_type::string: return "a string";
    case toml::node_type::integer: return "an integer";
    case toml::node_type::floating_point: return "a number";
    case toml::node_type::boolean: return "a boolean";
    case toml::node_type::table: return "a table";
    case toml::node_type::array: return "an array";
    default: return "a date or time";
  }
}

std::string quoted_list(const std::vector<std::string>& items) {
  std::string text;
  for (std::size_t i = 0; i < items.size(); ++i) {
    if (i > 0) text += i + 1 == items.size() ? " or " : ", ";
    text += items[i];
  }
  return text;
}

std::size_t edit_distance(std::string_view a, std::string_view b) {
  std::vector<std::size_t> row(b.size() + 1);
  for (std::size_t j = 0; j <= b.size(); ++j) row[j] = j;
  for (std::size_t i = 1; i <= a.size(); ++i) {
    std::size_t diagonal = row[0];
    row[0] = i;
    for (std::size_t j = 1; j <= b.size(); ++j) {
      const std::size_t above = row[j];
      row[j] = std::min({row[j] + 1, row[j - 1] + 1, diagonal + (a[i - 1] == b[j - 1] ? 0 : 1)});
      diagonal = above;
    }
  }
  return row[b.size()];
}

}  // namespace

toml::table parse_toml_file(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw Error(SourcePosition{path, 0, 0}, "cannot open file");
  std::ostringstream buffer;
  buffer << in.rdbuf();
  return parse_or_throw(buffer.str(), path);
}

toml::table parse_toml_text(std::string_view text, const std::string& name) {
  return parse_or_throw(text, name);
}

std::string nearest_key(std::string_view key, const std::vector<std::string>& valid) {
  std::string best;
  std::size_t best_distance = std::max<std::size_t>(2, key.size() / 3) + 1;
  for (const std::string& candidate : valid) {
    const std::size_t d = edit_distance(key, candidate);
    if (d < best_distance) {
      best_distance = d;
      best = candidate;
    }
  }
  return best;
}

double quantity_from_node(const toml::node& node, Dimension dimension, const std::string& file) {
  if (const auto* integer = node.as_integer()) return static_cast<double>(integer->get());
  if (const auto* floating = node.as_floating_point()) {
    if (!std::isfinite(floating->get())) {
      throw Error(position_of(node, file), "expected " + dimension_name(dimension) + ", found a non-finite number");
    }
    return floating->get();
  }
  if (const auto* text = node.as_string()) {
    try {
      return parse_quantity(text->get(), dimension);
    } catch (const Error& e) {
      throw Error(position_of(node, file), e.message());
    }
  }
  throw Error(position_of(node, file),
              "expected " + dimension_name(dimension) + ", found " + type_name(node));
}

TableReader::TableReader(const toml::table& table, std::string file, std::string where)
    : table_(table), file_(std::move(file)), where_(std::move(where)) {}

bool TableReader::has(std::string_view key) const { return table_.contains(key); }

const toml::node* TableReader::lookup(std::string_view key) {
  const toml::node* found = table_.get(key);
  if (found != nullptr) used_.emplace(key);
  return found;
}

const toml::node* TableReader::node(std::string_view key) { return lookup(key); }

SourcePosition TableReader::position(std::string_view key) const {
  if (const toml::node* found = table_.get(key)) return position_of(*found, file_);
  return table_position();
}

SourcePosition TableReader::table_position() const { return position_of(table_, file_); }

void TableReader::fail(std::string_view key, const std::string& message) const {
  throw Error(position(key), message);
}

double TableReader::required_quantity(std::string_view key, Dimension dimension) {
  const toml::node* found = lookup(key);
  if (found == nullptr) {
    throw Error(table_position(), "missing key '" + std::string(key) + "' in [" + where_ +
                                      "] (expected " + dimension_name(dimension) + ")");
  }
  return quantity_from_node(*found, dimension, file_);
}

std::optional<double> TableReader::optional_quantity(std::string_view key, Dimension dimension) {
  const toml::node* found = lookup(key);
  if (found == nullptr) return std::nullopt;
  return quantity_from_node(*found, dimension, file_);
}

double TableReader::quantity_or(std::string_view key, Dimension dimension, double fallback) {
  return optional_quantity(key, dimension).value_or(fallback);
}

std::optional<std::string> TableReader::optional_string(std::string_view key) {
  const toml::node* found = lookup(key);
  if (found == nullptr) return std::nullopt;
  if (const auto* text = found->as_string()) return text->get();
  throw Error(position_of(*found, file_), "expected a string, found " + type_name(*found));
}

std::string TableReader::required_string(std::string_view key) {
  auto value = optional_string(key);
  if (!value) {
    throw Error(table_position(),
                "missing key '" + std::string(key) + "' in [" + where_ + "] (expected a string)");
  }
  return *value;
}

std::optional<std::string> TableReader::optional_choice(std::string_view key,
                                                        const std::vector<std::string>& choices) {
  auto value = optional_string(key);
  if (!value) return std::nullopt;
  if (std::find(choices.begin(), choices.end(), *value) == choices.end()) {
    std::string message = "expected one of " + quoted_list(choices) + ", found \"" + *value + "\"";
    const std::string near = nearest_key(*value, choices);
    if (!near.empty()) message += "; did you mean '" + near + "'?";
    fail(key, message);
  }
  return value;
}

std::string TableReader::required_choice(std::string_view key, const std::vector<std::string>& choices) {
  auto value = optional_choice(key, choices);
  if (!value) {
    throw Error(table_position(), "missing key '" + std::string(key) + "' in [" + where_ +
                                      "] (expected one of " + quoted_list(choices) + ")");
  }
  return *value;
}

std::optional<std::int64_t> TableReader::optional_integer(std::string_view key) {
  const toml::node* found = lookup(key);
  if (found == nullptr) return std::nullopt;
  if (const auto* integer = found->as_integer()) return integer->get();
  throw Error(position_of(*found, file_), "expected an integer, found " + type_name(*found));
}

std::optional<bool> TableReader::optional_bool(std::string_view key) {
  const toml::node* found = lookup(key);
  if (found == nullptr) return std::nullopt;
  if (const auto* boolean = found->as_boolean()) return boolean->get();
  throw Error(position_of(*found, file_), "expected true or false, found " + type_name(*found));
}

std::vector<std::string> TableReader::string_array(std::string_view key) {
  std::vector<std::string> items;
  const toml::node* found = lookup(key);
  if (found == nullptr) return items;
  if (const auto* text = found->as_string()) return {text->get()};  // a lone string is a list of one
  const auto* array = found->as_array();
  if (array == nullptr) {
    throw Error(position_of(*found, file_), "expected an array of strings, found " + type_name(*found));
  }
  for (const toml::node& element : *array) {
    const auto* text = element.as_string();
    if (text == nullptr) {
      throw Error(position_of(element, file_), "expected a string, found " + type_name(element));
    }
    items.push_back(text->get());
  }
  return items;
}

const toml::table* TableReader::optional_table(std::string_view key) {
  const toml::node* found = lookup(key);
  if (found == nullptr) return nullptr;
  if (const auto* table = found->as_table()) return table;
  throw Error(position_of(*found, file_), "expected a table, found " + type_name(*found));
}

std::vector<const toml::table*> TableReader::table_array(std::string_view key) {
  std::vector<const toml::table*> tables;
  const toml::node* found = lookup(key);
  if (found == nullptr) return tables;
  if (const auto* single = found->as_table()) return {single};
  const auto* array = found->as_array();
  if (array == nullptr) {
    throw Error(position_of(*found, file_), "expected an array of tables, found " + type_name(*found));
  }
  for (const toml::node& element : *array) {
    const auto* table = element.as_table();
    if (table == nullptr) {
      throw Error(position_of(element, file_), "expected a table, found " + type_name(element));
    }
    tables.push_back(table);
  }
  return tables;
}

void TableReader::finish(const std::vector<std::string>& valid_keys) const {
  // Report the first unknown key in file order, for a stable message.
  const toml::key* first = nullptr;
  for (const auto& [key, value] : table_) {
    (void)value;
    if (std::find(valid_keys.begin(), valid_keys.end(), key.str()) != valid_keys.end()) continue;
    const auto& begin = key.source().begin;
    if (first == nullptr || begin.line < first->source().begin.line ||
        (begin.line == first->source().begin.line && begin.column < first->source().begin.column)) {
      first = &key;
    }
  }
  if (first == nullptr) return;
  const auto& begin = first->source().begin;
  std::string message = "unknown key '" + std::string(first->str()) + "' in [" + where_ + "]";
  const std::string near = nearest_key(first->str(), valid_keys);
  if (!near.empty()) message += "; did you mean '" + near + "'?";
  throw Error(SourcePosition{file_, static_cast<int>(begin.line), static_cast<int>(begin.column)}, message);
}

}  // namespace spurcast

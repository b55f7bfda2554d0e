#include "core/input/toml_reader.hpp"

#include "core/input/input_file.hpp"

#include <algorithm>
#include <cmath>

namespace spurcast {

SourcePosition position_of(const toml::node& node, const std::string& file) {
  const auto& begin = node.source().begin;
  return SourcePosition{file, static_cast<int>(begin.line), static_cast<int>(begin.column)};
}

namespace {

/// How deep tables, arrays and inline tables nest in one TOML file, counted before toml++ reads
/// it. toml++ 3.3.0 bounds arrays and inline tables nested in a value (TOML_MAX_NESTED_VALUES,
/// 256) but not the parts of a dotted key or table header: it recurses once per part, and a
/// `[k.k.k...]` header of about 300,000 parts overflows the stack (found by hand; issue 14).
/// Every depth here counts one level per header part, key part, array and inline table, so a
/// file cannot reach toml++ nested deeper than max_toml_depth however it mixes them.
class NestingTracker {
 public:
  explicit NestingTracker(const std::string& name) : name_(name) {}

  /// A character outside strings and comments other than blanks and newlines.
  void significant(char c, int line, int column) {
    switch (expect_) {
      case Expect::line_start:
        if (c == '[') {
          expect_ = Expect::header;
          parts_ = 0;
          return;
        }
        expect_ = Expect::key;
        parts_ = 0;
        key_character(c, line, column);
        return;
      case Expect::header:
        if (c == '[' && parts_ == 0) return;  // the second bracket of [[array.of.tables]]
        if (c == ']') {
          table_depth_ = parts_;
          expect_ = Expect::after_header;
          return;
        }
        if (parts_ == 0) parts_ = 1;
        if (c == '.') add_part(0, line, column);
        return;
      case Expect::after_header: return;
      case Expect::key: key_character(c, line, column); return;
      case Expect::value: value_character(c, line, column); return;
    }
  }
  /// A quote that opens a string (a quoted key part, or a string value).
  void string_opens(int line, int column) {
    if (expect_ == Expect::line_start) {
      expect_ = Expect::key;
      parts_ = 0;
    }
    if ((expect_ == Expect::key || expect_ == Expect::header) && parts_ == 0) {
      parts_ = 1;
      check(container_depth() + parts_, line, column);
    }
  }
  /// A newline outside strings: the end of a key/value pair or header, unless inside brackets.
  void newline() {
    if (frames_.empty()) expect_ = Expect::line_start;
  }

 private:
  enum class Expect { line_start, header, after_header, key, value };
  struct Frame {
    char kind;  // '[' an array (depth: its elements'), '{' an inline table (depth: the table's)
    int depth;
  };

  [[nodiscard]] int container_depth() const {
    for (auto it = frames_.rbegin(); it != frames_.rend(); ++it) {
      if (it->kind == '{') return it->depth;
    }
    return table_depth_;
  }
  void check(int depth, int line, int column) const {
    if (depth > max_toml_depth) {
      throw Error(SourcePosition{name_, line, column},
                  "keys, tables and arrays nested more than " + std::to_string(max_toml_depth) +
                      " levels deep (each part of a dotted key counts one level)");
    }
  }
  void add_part(int base, int line, int column) {
    ++parts_;
    check(base + parts_, line, column);
  }
  void key_character(char c, int line, int column) {
    if (c == '}' && parts_ == 0 && !frames_.empty()) {  // an empty inline table, {}
      frames_.pop_back();
      expect_ = Expect::value;
      return;
    }
    if (c == '=') {
      value_depth_ = container_depth() + std::max(parts_, 1);
      expect_ = Expect::value;
      return;
    }
    if (parts_ == 0) {
      parts_ = 1;
      check(container_depth() + parts_, line, column);
    }
    if (c == '.') add_part(container_depth(), line, column);
  }
  void value_character(char c, int line, int column) {
    if (c == '[') {
      frames_.push_back(Frame{'[', value_depth_ + 1});
      value_depth_ += 1;
      check(value_depth_, line, column);
    } else if (c == '{') {
      frames_.push_back(Frame{'{', value_depth_});
      expect_ = Expect::key;
      parts_ = 0;
    } else if (c == ',' && !frames_.empty()) {
      if (frames_.back().kind == '[') {
        value_depth_ = frames_.back().depth;
      } else {
        expect_ = Expect::key;
        parts_ = 0;
      }
    } else if ((c == ']' || c == '}') && !frames_.empty()) {
      frames_.pop_back();
      if (!frames_.empty() && frames_.back().kind == '[') value_depth_ = frames_.back().depth;
    }
  }

  const std::string& name_;
  Expect expect_ = Expect::line_start;
  std::vector<Frame> frames_;
  int table_depth_ = 0;
  int parts_ = 0;
  int value_depth_ = 0;
};

/// Reads the text once before toml++ does: refuses nesting deeper than max_toml_depth
/// (NestingTracker), and non-ASCII text outside strings:
///
/// TOML 1.0 allows non-ASCII text only inside strings and comments (bare keys and values are
/// ASCII). Refusing it elsewhere before toml++ sees it gives a clear message, and keeps away from
/// a defect of toml++ 3.3.0 (Debian 12): its is_non_ascii_horizontal_whitespace() reaches
/// __builtin_unreachable for U+00A1..U+0499 and U+FEF6..U+FEFE met outside a string, which is
/// undefined behaviour (found by fuzzing; tests/data/fuzz-regressions/toml/). Multi-line strings
/// take ASCII content only, so that this scanner and the parser never disagree about where a
/// string with non-ASCII text ends. For the same reason a quote opens a string only where TOML
/// lets a string begin: at the start of a key (start of a line outside brackets, after '.', '[' or
/// '{' or ','), or as a value (after '=', '[' or ','). A quote glued to other text (`19'9`) is
/// invalid TOML, and the parser may read on past it as part of a date or number, so the scanner
/// reads on as bare text too.
void prescan_toml(std::string_view text, const std::string& name) {
  enum class State { bare, comment, basic, literal, multiline_basic, multiline_literal };
  State state = State::bare;
  NestingTracker nesting(name);
  // Last character outside strings and comments other than blanks; '\n' at a line start
  // outside brackets. A closing quote counts as '"' so that "a" "b" is not read as two strings.
  char previous_significant = '\n';
  int bracket_depth = 0;
  const auto string_may_open_here = [&] {
    return previous_significant == '\n' || previous_significant == '=' || previous_significant == '[' ||
           previous_significant == '{' || previous_significant == ',' || previous_significant == '.';
  };
  int line = 1;
  int column = 0;
  std::size_t i = 0;
  if (text.substr(0, 3) == "\xEF\xBB\xBF") i = 3;  // a UTF-8 byte-order mark is allowed
  const auto starts = [&](std::size_t at, std::string_view token) { return text.substr(at, token.size()) == token; };
  const std::string_view triple_quote = "\"\"\"";
  const std::string_view triple_apostrophe = "'''";
  for (; i < text.size(); ++i) {
    const auto byte = static_cast<unsigned char>(text[i]);
    if (byte == '\n') {
      ++line;
      column = 0;
    } else if ((byte & 0xC0) != 0x80) {
      ++column;  // count characters, not UTF-8 continuation bytes
    }
    if (byte >= 0x80 && state != State::comment && state != State::basic && state != State::literal) {
      throw Error(SourcePosition{name, line, column},
                  state == State::bare ? "non-ASCII character outside a quoted string (TOML keys and values are "
                                         "ASCII; quote the value, e.g. \"4.7 \xC2\xB5" "F\")"
                                       : "non-ASCII character in a multi-line string (use a single-line string)");
    }
    switch (state) {
      case State::bare:
        if (byte == '#') {
          state = State::comment;
        } else if ((byte == '"' || byte == '\'') && string_may_open_here()) {
          const bool basic = byte == '"';
          if (starts(i, basic ? triple_quote : triple_apostrophe)) {
            state = basic ? State::multiline_basic : State::multiline_literal;
            i += 2;
            column += 2;
          } else {
            state = basic ? State::basic : State::literal;
          }
          nesting.string_opens(line, column);
        } else if (byte == '\n') {
          if (bracket_depth == 0) previous_significant = '\n';
          nesting.newline();
        } else if (byte != ' ' && byte != '\t' && byte != '\r') {
          nesting.significant(static_cast<char>(byte), line, column);
          if (byte == '[' || byte == '{') ++bracket_depth;
          if ((byte == ']' || byte == '}') && bracket_depth > 0) --bracket_depth;
          previous_significant = static_cast<char>(byte);
        }
        break;
      case State::comment:
        if (byte == '\n') {
          state = State::bare;
          if (bracket_depth == 0) previous_significant = '\n';
          nesting.newline();
        }
        break;
      case State::basic:
        if (byte == '\\' && i + 1 < text.size() && text[i + 1] != '\n') {
          ++i;
          if ((static_cast<unsigned char>(text[i]) & 0xC0) != 0x80) ++column;
          if (static_cast<unsigned char>(text[i]) >= 0x80) {
            throw Error(SourcePosition{name, line, column}, "non-ASCII character after a backslash in a string");
          }
        } else if (byte == '"' || byte == '\n') {
          state = State::bare;
          previous_significant = byte == '\n' && bracket_depth == 0 ? '\n' : '"';
          if (byte == '\n') nesting.newline();
        }
        break;
      case State::literal:
        if (byte == '\'' || byte == '\n') {
          state = State::bare;
          previous_significant = byte == '\n' && bracket_depth == 0 ? '\n' : '"';
          if (byte == '\n') nesting.newline();
        }
        break;
      case State::multiline_basic:
        if (byte == '\\' && i + 1 < text.size() && text[i + 1] != '\n' &&
            static_cast<unsigned char>(text[i + 1]) < 0x80) {
          ++i;
          ++column;
        } else if (starts(i, triple_quote)) {
          state = State::bare;
          previous_significant = '"';
          i += 2;
          column += 2;
        }
        break;
      case State::multiline_literal:
        if (starts(i, triple_apostrophe)) {
          state = State::bare;
          previous_significant = '"';
          i += 2;
          column += 2;
        }
        break;
    }
  }
}

toml::table parse_or_throw(std::string_view text, const std::string& name) {
  prescan_toml(text, name);
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

/// Optimal-string-alignment distance: insertions, deletions, substitutions and swaps of two
/// neighbouring characters each count one edit ("stpe" is one edit from "step").
std::size_t edit_distance(std::string_view a, std::string_view b) {
  std::vector<std::vector<std::size_t>> d(a.size() + 1, std::vector<std::size_t>(b.size() + 1));
  for (std::size_t i = 0; i <= a.size(); ++i) d[i][0] = i;
  for (std::size_t j = 0; j <= b.size(); ++j) d[0][j] = j;
  for (std::size_t i = 1; i <= a.size(); ++i) {
    for (std::size_t j = 1; j <= b.size(); ++j) {
      d[i][j] = std::min({d[i - 1][j] + 1, d[i][j - 1] + 1, d[i - 1][j - 1] + (a[i - 1] == b[j - 1] ? 0 : 1)});
      if (i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1]) d[i][j] = std::min(d[i][j], d[i - 2][j - 2] + 1);
    }
  }
  return d[a.size()][b.size()];
}

}  // namespace

toml::table parse_toml_file(const std::string& path, const std::string& what) {
  return parse_or_throw(read_input_file(path, what, max_toml_file_bytes), path);
}

toml::table parse_toml_text(std::string_view text, const std::string& name) {
  return parse_or_throw(text, name);
}

std::string nearest_key(std::string_view key, const std::vector<std::string>& valid) {
  std::string best;
  // A suggestion is worth making within one edit per three characters (at least one edit).
  std::size_t best_distance = std::max<std::size_t>(1, key.size() / 3) + 1;
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

Error TableReader::missing(std::string_view key, const std::string& expected) const {
  // A key nobody has asked for that is close to the missing one is its misspelling: name it
  // where it is, rather than the absence of the right one (issue 14).
  const toml::key* misspelt = nullptr;
  for (const auto& [candidate, value] : table_) {
    (void)value;
    if (used_.count(candidate.str()) != 0 || nearest_key(candidate.str(), {std::string(key)}).empty()) continue;
    if (misspelt == nullptr || candidate.source().begin.line < misspelt->source().begin.line) misspelt = &candidate;
  }
  if (misspelt != nullptr) {
    const auto& begin = misspelt->source().begin;
    return Error(SourcePosition{file_, static_cast<int>(begin.line), static_cast<int>(begin.column)},
                 "unknown key '" + std::string(misspelt->str()) + "' in [" + where_ + "]; did you mean '" +
                     std::string(key) + "'?");
  }
  return Error(table_position(), "missing key '" + std::string(key) + "' in [" + where_ + "] (expected " + expected + ")");
}

void TableReader::fail(std::string_view key, const std::string& message) const {
  throw Error(position(key), message);
}

double TableReader::required_quantity(std::string_view key, Dimension dimension) {
  const toml::node* found = lookup(key);
  if (found == nullptr) {
    throw missing(key, dimension_name(dimension));
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
    throw missing(key, "a string");
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
    throw missing(key, "one of " + quoted_list(choices));
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

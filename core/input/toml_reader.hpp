#pragma once
/// A checked reader over one toml++ table, shared by every TOML loader (scenario, limit lines, band
/// plans). It converts quantities with their units, keeps the source position of every value for
/// messages, and, at finish(), rejects keys nobody asked for, suggesting the nearest valid key.
///
/// Example:
///   TableReader reader(table, "scenario.toml", "switching");
///   const double f_hz = reader.required_quantity("frequency", Dimension::frequency);
///   reader.finish({"frequency", "duty"});  // "scenario.toml:4:1: unknown key 'frequncy' in [switching]; did you mean 'frequency'?"
#include "core/input/toml.hpp"

#include <cstdint>
#include <optional>
#include <set>
#include <string>
#include <string_view>
#include <vector>

#include "core/input/error.hpp"
#include "core/input/units.hpp"

namespace spurcast {

/// The deepest nesting a TOML file may have: one level per part of a table header or dotted key,
/// per array and per inline table (`[a.b]` then `c = [{d = 1}]` puts d at 5). Deeper text is
/// refused before toml++ reads it (toml++ recurses once per dotted-key part with no bound of its
/// own). spurcast files need 5 at most (`[[limits.line]]` with `segment = [{from = ...}]`);
/// the bound is a judgement, far below the depth where toml++ runs out of stack.
inline constexpr int max_toml_depth = 64;

/// Position of a toml++ node in `file`.
[[nodiscard]] SourcePosition position_of(const toml::node& node, const std::string& file);
/// Parses a TOML file (a regular file of at most max_toml_file_bytes, core/input/input_file.hpp);
/// syntax errors and nesting deeper than max_toml_depth become Error with file:line:column.
/// `what` names the file in messages: "scenario file", "limit file", "band plan".
[[nodiscard]] toml::table parse_toml_file(const std::string& path, const std::string& what);
/// Parses TOML text (for tests and in-memory scenarios); `name` stands for the file in messages.
[[nodiscard]] toml::table parse_toml_text(std::string_view text, const std::string& name);

/// The valid key closest to `key` by edit distance, or "" when none is close.
[[nodiscard]] std::string nearest_key(std::string_view key, const std::vector<std::string>& valid);

class TableReader {
 public:
  /// `where` names the table in messages ("switching", "filter 2", "limits.line 1").
  TableReader(const toml::table& table, std::string file, std::string where);

  [[nodiscard]] bool has(std::string_view key) const;
  [[nodiscard]] double required_quantity(std::string_view key, Dimension dimension);
  [[nodiscard]] std::optional<double> optional_quantity(std::string_view key, Dimension dimension);
  [[nodiscard]] double quantity_or(std::string_view key, Dimension dimension, double fallback);
  [[nodiscard]] std::string required_string(std::string_view key);
  [[nodiscard]] std::optional<std::string> optional_string(std::string_view key);
  /// One of `choices`; otherwise "expected one of a, b, c, found "x"".
  [[nodiscard]] std::string required_choice(std::string_view key, const std::vector<std::string>& choices);
  [[nodiscard]] std::optional<std::string> optional_choice(std::string_view key,
                                                           const std::vector<std::string>& choices);
  [[nodiscard]] std::optional<std::int64_t> optional_integer(std::string_view key);
  [[nodiscard]] std::optional<bool> optional_bool(std::string_view key);
  [[nodiscard]] std::vector<std::string> string_array(std::string_view key);
  /// A sub-table (inline or not); marks the key used. nullptr if absent; error if not a table.
  [[nodiscard]] const toml::table* optional_table(std::string_view key);
  /// An array of tables ([[key]]) or an inline array of tables; empty when absent.
  [[nodiscard]] std::vector<const toml::table*> table_array(std::string_view key);
  /// The raw node (marks the key used), nullptr if absent.
  [[nodiscard]] const toml::node* node(std::string_view key);

  /// Position of a key's value, or of the table itself when the key is absent.
  [[nodiscard]] SourcePosition position(std::string_view key) const;
  [[nodiscard]] SourcePosition table_position() const;
  [[nodiscard]] const std::string& file() const noexcept { return file_; }
  [[nodiscard]] const std::string& where() const noexcept { return where_; }

  /// Throws for the first key (in file order) that is not in `valid_keys`, suggesting the nearest
  /// valid one: "unknown key 'frequncy' in [switching]; did you mean 'frequency'?".
  void finish(const std::vector<std::string>& valid_keys) const;

  /// Throws Error at the key's value position.
  [[noreturn]] void fail(std::string_view key, const std::string& message) const;

 private:
  const toml::node* lookup(std::string_view key);
  /// "missing key 'k' in [where] (expected ...)" at the table, or, when an unread key of the table
  /// is close to `key`, "unknown key 'frequncy' in [switching]; did you mean 'frequency'?" at it.
  [[nodiscard]] Error missing(std::string_view key, const std::string& expected) const;
  const toml::table& table_;
  std::string file_;
  std::string where_;
  std::set<std::string, std::less<>> used_;
};

/// A quantity from any node: a TOML number (SI base units) or a string with a unit.
[[nodiscard]] double quantity_from_node(const toml::node& node, Dimension dimension,
                                        const std::string& file);

}  // namespace spurcast

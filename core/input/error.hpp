#pragma once
/// The one exception type of the library. Every error that the user can act on is an Error; the
/// CLI catches it once, prefixes `spurcast: error: ` and exits with code 2.
#include <stdexcept>
#include <string>

namespace spurcast {

/// Where in an input file a value came from. `line` and `column` are 1-based; 0 means unknown.
struct SourcePosition {
  std::string file;
  int line = 0;
  int column = 0;

  /// "file:line:col", "file:line", "file" or "" depending on what is known.
  [[nodiscard]] std::string to_string() const;
};

/// An error with an optional source position. Messages are short and lowercase,
/// "expected X, found Y" where that fits.
class Error : public std::runtime_error {
 public:
  explicit Error(const std::string& message);
  Error(SourcePosition where, const std::string& message);

  [[nodiscard]] const SourcePosition& where() const noexcept { return where_; }
  /// The message without the position prefix.
  [[nodiscard]] const std::string& message() const noexcept { return message_; }

 private:
  SourcePosition where_;
  std::string message_;
};

}  // namespace spurcast

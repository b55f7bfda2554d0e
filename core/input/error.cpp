#include "core/input/error.hpp"

namespace spurcast {

std::string SourcePosition::to_string() const {
  std::string text = file;
  if (line > 0) {
    text += ':' + std::to_string(line);
    if (column > 0) text += ':' + std::to_string(column);
  }
  return text;
}

namespace {
std::string with_position(const SourcePosition& where, const std::string& message) {
  const std::string prefix = where.to_string();
  return prefix.empty() ? message : prefix + ": " + message;
}
}  // namespace

Error::Error(const std::string& message) : std::runtime_error(message), message_(message) {}

Error::Error(SourcePosition where, const std::string& message)
    : std::runtime_error(with_position(where, message)),
      where_(std::move(where)),
      message_(message) {}

}  // namespace spurcast

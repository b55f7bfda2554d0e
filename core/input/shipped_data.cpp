#include "core/input/shipped_data.hpp"

#include <cstdlib>
#include <system_error>
#include <vector>

#include "core/input/error.hpp"

namespace spurcast {

namespace fs = std::filesystem;

namespace {

bool holds_limits(const fs::path& folder) {
  std::error_code ignored;
  return fs::is_directory(folder / "limits", ignored);
}

}  // namespace

std::string ShippedData::limits_directory() const {
  return (fs::path(directory) / "limits").string();
}

std::string ShippedData::bands_directory() const {
  return (fs::path(directory) / "limits" / "bands").string();
}

std::string ShippedData::examples_directory() const {
  return (fs::path(directory) / "examples").string();
}

std::string ShippedData::shown_path(const std::string& path) const {
  if (directory.empty() || path.empty()) return path;
  const fs::path root = fs::absolute(fs::path(directory)).lexically_normal();
  const fs::path file = fs::absolute(fs::path(path)).lexically_normal();
  const fs::path below = file.lexically_relative(root);
  if (below.empty() || below == "." || *below.begin() == "..") return path;
  return std::string(shipped_prefix) + "/" + below.generic_string();
}

fs::path running_executable() {
  std::error_code error;
  fs::path self = fs::read_symlink("/proc/self/exe", error);
  if (error) return {};
  return self;
}

ShippedData locate_shipped_data(const std::optional<std::string>& override_directory,
                                const fs::path& executable) {
  const std::string advice =
      "; set " + std::string(data_directory_variable) + " to the folder that holds them";
  if (override_directory && !override_directory->empty()) {
    if (holds_limits(*override_directory)) return ShippedData{*override_directory};
    throw Error("cannot find spurcast's data (limits/, examples/): looked in " +
                *override_directory + " (from " + data_directory_variable + ")" + advice);
  }
  std::vector<fs::path> candidates;
  if (!executable.empty()) {
    const fs::path folder = executable.parent_path();
    candidates.push_back((folder / ".." / "share" / "spurcast").lexically_normal());
    candidates.push_back((folder / "share" / "spurcast").lexically_normal());
  }
  std::string looked;
  for (const fs::path& candidate : candidates) {
    if (holds_limits(candidate)) return ShippedData{candidate.string()};
    looked += (looked.empty() ? "" : ", ") + candidate.string();
  }
  if (looked.empty()) looked = "nowhere (the running executable's path is unknown)";
  throw Error("cannot find spurcast's data (limits/, examples/): looked in " + looked + advice);
}

ShippedData locate_shipped_data() {
  const char* value = std::getenv(data_directory_variable);
  return locate_shipped_data(value != nullptr ? std::optional<std::string>(value) : std::nullopt,
                             running_executable());
}

}  // namespace spurcast

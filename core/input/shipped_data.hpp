#pragma once
/// Where the files spurcast ships with (limit lines, band plans, example scenarios) sit at run
/// time: `share/spurcast` found relative to the running executable, so an installed tree can be
/// moved and the build tree works as it is. Nothing here is compiled in from the source tree.
///
/// Layout of the folder (the same as the source tree's top level):
///   limits/*.toml          limit-line files
///   limits/bands/*.toml    broadcast band plans, one per ITU region
///   examples/*.toml        example scenarios (and examples/captures/)
///
/// Example:
///   const ShippedData data = locate_shipped_data();             // the CLI's default
///   const ShippedData mine{"/opt/spurcast/share/spurcast"};      // a library user's own choice
///   const Scenario s = load_scenario("board.toml", mine);
#include <filesystem>
#include <optional>
#include <string>

namespace spurcast {

/// The environment variable that names the data folder, overriding the executable-relative lookup.
inline constexpr const char* data_directory_variable = "SPURCAST_DATA_DIR";

/// How reports name a shipped file instead of the folder it sits in ("<shipped>/limits/x.toml").
inline constexpr const char* shipped_prefix = "<shipped>";

/// The shipped data folder, a value passed to whatever resolves shipped names.
struct ShippedData {
  std::string directory;  ///< the folder holding limits/, limits/bands/ and examples/

  /// `directory`/limits: the limit-line files.
  [[nodiscard]] std::string limits_directory() const;
  /// `directory`/limits/bands: the band plans.
  [[nodiscard]] std::string bands_directory() const;
  /// `directory`/examples: the example scenarios.
  [[nodiscard]] std::string examples_directory() const;
  /// The name a report prints for `path`: "<shipped>/" + the path below `directory` when the file
  /// lies inside it (reports must not name the folder the tool was built or installed in), else
  /// `path` unchanged.
  [[nodiscard]] std::string shown_path(const std::string& path) const;
};

/// The running executable's path (/proc/self/exe, proc(5)); empty when it cannot be read.
[[nodiscard]] std::filesystem::path running_executable();

/// Finds the data folder from explicit inputs:
///   1. `override_directory` (the value of SPURCAST_DATA_DIR) when given and non-empty; it must
///   hold
///      limits/, or the lookup fails (an override is never silently ignored);
///   2. `<executable's folder>/../share/spurcast` (an installed tree: bin/ beside share/);
///   3. `<executable's folder>/share/spurcast` (the build tree, where the build copies the data).
/// A candidate counts when it holds a limits/ folder. Throws Error naming every folder it looked
/// in:
///   cannot find spurcast's data (limits/, examples/): looked in A, B; set SPURCAST_DATA_DIR to the
///   folder that holds them
[[nodiscard]] ShippedData locate_shipped_data(const std::optional<std::string>& override_directory,
                                              const std::filesystem::path& executable);

/// The same from the environment (SPURCAST_DATA_DIR) and running_executable(): the default the
/// command-line tool passes into the library.
[[nodiscard]] ShippedData locate_shipped_data();

}  // namespace spurcast

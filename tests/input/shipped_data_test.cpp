// The data folder lookup (core/input/shipped_data.hpp). The layouts are the Filesystem Hierarchy
// Standard's (FHS 3.0: programs in <prefix>/bin, §4.4; architecture-independent data in
// <prefix>/share/<package>, §4.11), which installed trees and Debian packages follow; the running
// executable is the link /proc/self/exe (proc(5)).
#include "core/input/shipped_data.hpp"

#include <doctest/doctest.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

#include "core/input/error.hpp"

using namespace spurcast;
namespace fs = std::filesystem;

namespace {

/// A fresh folder under the system temporary folder.
fs::path fresh(const std::string& name) {
  const fs::path dir = fs::temp_directory_path() /
                       ("spurcast-shipped-data-test-" + name + "-" + std::to_string(getpid()));
  fs::remove_all(dir);
  fs::create_directories(dir);
  return fs::canonical(dir);
}

std::string read_all(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::stringstream text;
  text << in.rdbuf();
  return text.str();
}

const std::string advice = "; set SPURCAST_DATA_DIR to the folder that holds them";

}  // namespace

TEST_CASE(
    "an installed tree: <prefix>/bin/spurcast finds <prefix>/share/spurcast (FHS 3.0 §4.4, "
    "§4.11)") {
  const fs::path prefix = fresh("installed");
  fs::create_directories(prefix / "bin");
  fs::create_directories(prefix / "share/spurcast/limits/bands");
  const ShippedData data = locate_shipped_data(std::nullopt, prefix / "bin/spurcast");
  CHECK(data.directory == (prefix / "share/spurcast").string());
  CHECK(data.limits_directory() == (prefix / "share/spurcast/limits").string());
  CHECK(data.bands_directory() == (prefix / "share/spurcast/limits/bands").string());
  CHECK(data.examples_directory() == (prefix / "share/spurcast/examples").string());
  fs::remove_all(prefix);
}

TEST_CASE(
    "the build tree: <build>/spurcast finds <build>/share/spurcast; the installed layout comes "
    "first") {
  const fs::path build = fresh("build");
  fs::create_directories(build / "share/spurcast/limits");
  CHECK(locate_shipped_data(std::nullopt, build / "spurcast").directory ==
        (build / "share/spurcast").string());
  // Both present (a build folder inside a prefix): the installed layout wins.
  fs::create_directories(build / "bin");
  fs::create_directories(build / "share/spurcast/limits");
  const fs::path nested = build / "bin";
  fs::create_directories(nested / "share/spurcast/limits");
  CHECK(locate_shipped_data(std::nullopt, nested / "spurcast").directory ==
        (build / "share/spurcast").string());
  fs::remove_all(build);
}

TEST_CASE(
    "SPURCAST_DATA_DIR overrides the lookup; an override without data is an error, not skipped") {
  const fs::path root = fresh("override");
  fs::create_directories(root / "mine/limits");
  fs::create_directories(root / "bin");
  fs::create_directories(root / "share/spurcast/limits");
  const std::string mine = (root / "mine").string();
  CHECK(locate_shipped_data(mine, root / "bin/spurcast").directory == mine);
  // An empty value counts as unset.
  CHECK(locate_shipped_data(std::string(), root / "bin/spurcast").directory ==
        (root / "share/spurcast").string());
  const std::string empty_folder = (root / "bin").string();
  CHECK_THROWS_WITH_AS((void)locate_shipped_data(empty_folder, root / "bin/spurcast"),
                       ("cannot find spurcast's data (limits/, examples/): looked in " +
                        empty_folder + " (from SPURCAST_DATA_DIR)" + advice)
                           .c_str(),
                       Error);
  fs::remove_all(root);
}

TEST_CASE("no data anywhere: one error naming every folder looked in") {
  const fs::path root = fresh("nowhere");
  fs::create_directories(root / "bin");
  CHECK_THROWS_WITH_AS(
      (void)locate_shipped_data(std::nullopt, root / "bin/spurcast"),
      ("cannot find spurcast's data (limits/, examples/): looked in " +
       (root / "share/spurcast").string() + ", " + (root / "bin/share/spurcast").string() + advice)
          .c_str(),
      Error);
  CHECK_THROWS_WITH_AS(
      (void)locate_shipped_data(std::nullopt, fs::path()),
      ("cannot find spurcast's data (limits/, examples/): looked in nowhere (the running "
       "executable's path is unknown)" +
       advice)
          .c_str(),
      Error);
  fs::remove_all(root);
}

TEST_CASE("the running executable is this test (/proc/self/exe, proc(5))") {
  const fs::path self = running_executable();
  CHECK(self.is_absolute());
  CHECK(self.filename() == "shipped_data_test");
}

TEST_CASE(
    "this test, in the build folder, finds the build's copy of the data, identical to the source") {
  // The lookup without the variable, as from the build folder's executables.
  const ShippedData data = locate_shipped_data(std::nullopt, running_executable());
  CHECK(data.directory == (running_executable().parent_path() / "share/spurcast").string());
  for (const char* file : {"limits/cispr32-class-b-conducted.toml", "limits/bands/region1.toml",
                           "examples/greenhouse-buck.toml"}) {
    CAPTURE(file);
    const std::string copy = read_all(fs::path(data.directory) / file);
    CHECK_FALSE(copy.empty());
    CHECK(copy == read_all(fs::path(SPURCAST_SOURCE_DIR) / file));
  }
}

TEST_CASE("reports name a shipped file by its place in the data folder, any other file as given") {
  const ShippedData data{"/opt/x/share/spurcast"};
  CHECK(data.shown_path("/opt/x/share/spurcast/limits/cispr32-class-b-conducted.toml") ==
        "<shipped>/limits/cispr32-class-b-conducted.toml");
  CHECK(data.shown_path("/opt/x/bin/../share/spurcast/limits/bands/region2.toml") ==
        "<shipped>/limits/bands/region2.toml");
  // Outside the folder, including a sibling whose name merely starts the same.
  CHECK(data.shown_path("/opt/x/share/spurcast-old/limits/a.toml") ==
        "/opt/x/share/spurcast-old/limits/a.toml");
  CHECK(data.shown_path("/home/me/limits/mine.toml") == "/home/me/limits/mine.toml");
  CHECK(data.shown_path("mine.toml") == "mine.toml");
  CHECK(data.shown_path("") == "");
  // A relative data folder works against relative paths the same way.
  const ShippedData relative{"share/spurcast"};
  CHECK(relative.shown_path("share/spurcast/limits/a.toml") == "<shipped>/limits/a.toml");
  CHECK(relative.shown_path("./share/spurcast/examples/b.toml") == "<shipped>/examples/b.toml");
}

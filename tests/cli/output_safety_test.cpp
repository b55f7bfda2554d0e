// End-to-end tests of the user's files (issue 14): what spurcast may replace, what it refuses, and
// the exit code of an output that could not be written (docs/design.md §4: 3, apart from bad input's 2).
// External reference: the Linux file semantics the checks rely on (lstat file types, rename(2),
// flock(2)) as documented in the Linux man-pages project (from memory).
#include <doctest/doctest.h>

#include "cli_support.hpp"

#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <filesystem>
#include <string>
#include <vector>

namespace fs = std::filesystem;

namespace {

using spurcast::test::fresh_directory;
using spurcast::test::read_text;
using spurcast::test::run_cli;
using spurcast::test::RunResult;
using spurcast::test::write_text;

const fs::path source_dir = SPURCAST_SOURCE_DIR;
const fs::path example = source_dir / "examples" / "greenhouse-buck.toml";

std::vector<std::string> names_in(const fs::path& folder) {
  std::vector<std::string> names;
  for (const auto& entry : fs::directory_iterator(folder)) names.push_back(entry.path().filename().string());
  std::sort(names.begin(), names.end());
  return names;
}

/// A scratch folder for stdout/stderr, outside the folders under test.
struct Scratch {
  fs::path root = fresh_directory("spurcast-output-safety-", std::to_string(::getpid()));
  fs::path io = root / "io";
  Scratch() { fs::create_directories(io); }
  ~Scratch() { fs::remove_all(root); }
};

}  // namespace

TEST_CASE("predict -o the scenario's own folder (it holds a summary.json) is refused, exit 3, nothing deleted") {
  Scratch s;
  const fs::path project = s.root / "project";
  fs::create_directories(project);
  fs::copy_file(example, project / "buck.toml");
  write_text(project / "summary.json", "{\"mine\": true}\n");
  const RunResult r = run_cli(s.root, {"predict", "project/buck.toml", "-o", "project"}, s.io);
  CHECK(r.exit_code == 3);
  CHECK(r.err ==
        "spurcast: error: project is not empty and was not written by spurcast (no .spurcast-output marker); "
        "choose another folder\n");
  CHECK(names_in(project) == std::vector<std::string>{"buck.toml", "summary.json"});
  CHECK(read_text(project / "summary.json") == "{\"mine\": true}\n");
  CHECK(names_in(s.root) == std::vector<std::string>{"io", "project"});  // no temporary left beside it
}

TEST_CASE("predict -o \"$PWD\" with the scenario in it is refused, exit 3, the scenario survives") {
  Scratch s;
  const fs::path here = s.root / "here";
  fs::create_directories(here);
  fs::copy_file(example, here / "buck.toml");
  const RunResult r = run_cli(here, {"predict", "buck.toml", "-o", here.string()}, s.io);
  CHECK(r.exit_code == 3);
  CHECK(r.err == "spurcast: error: " + here.string() +
                     " is not empty and was not written by spurcast (no .spurcast-output marker); choose another folder\n");
  CHECK(names_in(here) == std::vector<std::string>{"buck.toml"});
  CHECK(read_text(here / "buck.toml") == read_text(example));
}

TEST_CASE("a report folder is replaced by a rerun; once the user adds a file to it, it is refused") {
  Scratch s;
  REQUIRE(run_cli(s.root, {"predict", example.string(), "-o", "out"}, s.io).exit_code <= 1);
  REQUIRE(run_cli(s.root, {"predict", example.string(), "-o", "out"}, s.io).exit_code <= 1);
  write_text(s.root / "out" / "notes.txt", "measured on the bench\n");
  const RunResult r = run_cli(s.root, {"predict", example.string(), "-o", "out"}, s.io);
  CHECK(r.exit_code == 3);
  CHECK(r.err ==
        "spurcast: error: out holds files spurcast did not write (notes.txt); move them or choose another folder\n");
  CHECK(read_text(s.root / "out" / "notes.txt") == "measured on the bench\n");
  CHECK(fs::exists(s.root / "out" / "report.html"));
}

// The installed program, end to end (ctest label "install"; tens of seconds):
//  - `cmake --install` into a temporary prefix, the prefix moved (renamed), then `spurcast demo`
//  and
//    `spurcast limits` run from another folder: they find their data beside the executable
//    (share/spurcast, FHS 3.0 §4.11) and no output names the source, build or original folder;
//  - a library user's project (tests/consumer/) configured against the moved prefix with
//    find_package(spurcast), built and run; its harmonics checked against Paul's trapezoid series;
//  - `cpack -G DEB` builds a package holding usr/bin/spurcast and the data under
//  usr/share/spurcast,
//    whose Depends covers every shared library the executable needs (dpkg -S), and whose unpacked
//    tree runs the demo;
//  - the man page names every command and option that `--help` shows.
#include <doctest/doctest.h>
#include <unistd.h>

#include <cmath>
#include <numbers>
#include <regex>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include "cli_support.hpp"

using namespace spurcast::test;

namespace {

const std::string source_dir = SPURCAST_SOURCE_DIR;
const std::string binary_dir = SPURCAST_BINARY_DIR;

/// Runs a /bin/sh command in `directory`, stdout and stderr captured through files in `scratch`.
RunResult run_shell(const fs::path& directory, const std::string& command,
                    const fs::path& scratch) {
  const fs::path out_file = scratch / "shell-stdout.txt";
  const fs::path err_file = scratch / "shell-stderr.txt";
  const std::string line = "cd " + shell_quote(directory.string()) + " && ( " + command + " ) >" +
                           shell_quote(out_file.string()) + " 2>" + shell_quote(err_file.string()) +
                           " </dev/null";
  const int status = std::system(line.c_str());
  RunResult result;
  result.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  result.out = read_text(out_file);
  result.err = read_text(err_file);
  return result;
}

/// Runs `executable` with `arguments` (quoted) in `directory` with SPURCAST_DATA_DIR unset unless
/// `environment` sets it.
RunResult run_program(const fs::path& directory, const fs::path& executable,
                      const std::vector<std::string>& arguments, const fs::path& scratch,
                      const std::string& environment = "") {
  std::string command =
      "env -u SPURCAST_DATA_DIR " + environment + " " + shell_quote(executable.string());
  for (const std::string& a : arguments) command += " " + shell_quote(a);
  return run_shell(directory, command, scratch);
}

/// Every text a run left behind: its stdout and stderr and the files of its report folder.
std::vector<std::pair<std::string, std::string>> outputs_of(const RunResult& run,
                                                            const fs::path& report_dir) {
  std::vector<std::pair<std::string, std::string>> texts{{"stdout", run.out}, {"stderr", run.err}};
  if (fs::is_directory(report_dir)) {
    for (const auto& entry : fs::directory_iterator(report_dir)) {
      texts.emplace_back(entry.path().filename().string(), read_text(entry.path()));
    }
  }
  return texts;
}

/// Checks that none of `texts` contains any of `forbidden` (folder paths).
void check_names_none_of(const std::vector<std::pair<std::string, std::string>>& texts,
                         const std::vector<std::string>& forbidden) {
  for (const auto& [name, text] : texts) {
    for (const std::string& path : forbidden) {
      CAPTURE(name);
      CAPTURE(path);
      CHECK(text.find(path) == std::string::npos);
    }
  }
}

/// A folder for this test under the system temporary folder, checked to lie outside the source and
/// build folders (otherwise "names no build path" could not fail for the right reason).
fs::path outside_directory(const std::string& name) {
  // The process id keeps two runs at once (two build folders on one machine) apart.
  const fs::path dir =
      fresh_directory("spurcast-install-test-", name + "-" + std::to_string(getpid()));
  const std::string text = fs::canonical(dir).string();
  REQUIRE(text.find(fs::canonical(source_dir).string()) == std::string::npos);
  REQUIRE(text.find(fs::canonical(binary_dir).string()) == std::string::npos);
  return fs::canonical(dir);
}

std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  return lines;
}

}  // namespace

TEST_CASE(
    "an installed tree, moved, runs demo and limits from another folder and names no build "
    "folder") {
  const fs::path root = outside_directory("moved");
  const fs::path first = root / "first-prefix";
  const fs::path moved = root / "moved-prefix";
  const fs::path work = root / "work";
  fs::create_directories(work);

  RunResult r = run_shell(root,
                          shell_quote(SPURCAST_CMAKE_COMMAND) + " --install " +
                              shell_quote(binary_dir) + " --prefix " + shell_quote(first.string()),
                          root);
  INFO(r.out, r.err);
  REQUIRE(r.exit_code == 0);
  // The layout of the issue: bin, headers under include/spurcast (core headers keep their paths),
  // the CMake package, the data under share/spurcast, the man page.
  for (const char* file :
       {"bin/spurcast", "include/spurcast/spurcast.hpp", "include/spurcast/core/input/units.hpp",
        "include/spurcast/core/chain/prediction.hpp",
        "share/spurcast/limits/cispr32-class-b-conducted.toml",
        "share/spurcast/limits/bands/region1.toml", "share/spurcast/examples/greenhouse-buck.toml",
        "share/man/man1/spurcast.1"}) {
    CAPTURE(file);
    CHECK(fs::is_regular_file(first / file));
  }
  bool has_library = false;
  bool has_package = false;
  for (const auto& entry : fs::recursive_directory_iterator(first)) {
    if (entry.path().filename() == "libspurcast_core.a") has_library = true;
    if (entry.path().filename() == "spurcastConfig.cmake") has_package = true;
  }
  CHECK(has_library);
  CHECK(has_package);

  fs::rename(first, moved);
  REQUIRE_FALSE(fs::exists(first));
  const fs::path spurcast = moved / "bin" / "spurcast";
  const std::vector<std::string> forbidden{source_dir, fs::canonical(source_dir).string(),
                                           binary_dir, fs::canonical(binary_dir).string(),
                                           first.string()};

  SUBCASE("demo") {
    r = run_program(work, spurcast, {"demo", "-o", "demo-out"}, root);
    INFO(r.out, r.err);
    CHECK(r.exit_code == 0);
    CHECK(r.err.empty());
    REQUIRE(fs::is_regular_file(work / "demo-out" / "summary.json"));
    REQUIRE(fs::is_regular_file(work / "demo-out" / "report.html"));
    // The shipped limit file is named by its place in the data folder.
    CHECK(read_text(work / "demo-out" / "summary.json")
              .find("\"file\": \"<shipped>/limits/cispr32-class-b-conducted.toml\"") !=
          std::string::npos);
    check_names_none_of(outputs_of(r, work / "demo-out"), forbidden);
  }
  SUBCASE("limits and bands") {
    r = run_program(work, spurcast, {"limits"}, root);
    INFO(r.out, r.err);
    CHECK(r.exit_code == 0);
    CHECK(r.err.empty());
    // The listing says where the files are: in the moved tree.
    CHECK(r.out.rfind("shipped limit files (" + (moved / "share/spurcast/limits").string() + "):\n",
                      0) == 0);
    CHECK(r.out.find("cispr32-class-b-conducted\n") != std::string::npos);
    check_names_none_of(outputs_of(r, {}), forbidden);
    r = run_program(work, spurcast, {"bands", "--region", "1"}, root);
    CHECK(r.exit_code == 0);
    CHECK(r.out.rfind("ITU Region 1 (" +
                          (moved / "share/spurcast/limits/bands/region1.toml").string() + ")\n",
                      0) == 0);
    check_names_none_of(outputs_of(r, {}), forbidden);
  }
  SUBCASE("an installed example predicts from another folder") {
    r = run_program(work, spurcast,
                    {"predict", (moved / "share/spurcast/examples/greenhouse-buck.toml").string(),
                     "-o", "greenhouse"},
                    root);
    INFO(r.out, r.err);
    // The invented example exceeds a limit on purpose (exit 1); 2 would mean it could not run.
    CHECK(r.exit_code == 1);
    CHECK(r.err.empty());
    CHECK(fs::is_regular_file(work / "greenhouse" / "report.html"));
    check_names_none_of(outputs_of(r, work / "greenhouse"), forbidden);
  }
  SUBCASE("SPURCAST_DATA_DIR overrides the lookup, and a missing data folder is one clear error") {
    // The executable alone, away from its tree: found only through the variable.
    const fs::path lonely = root / "lonely";
    fs::create_directories(lonely);
    fs::copy_file(spurcast, lonely / "spurcast");
    r = run_program(work, lonely / "spurcast", {"limits"}, root);
    CHECK(r.exit_code == 2);
    CHECK(r.out.empty());
    CHECK(r.err == "spurcast: error: cannot find spurcast's data (limits/, examples/): looked in " +
                       (root / "share/spurcast").string() + ", " +
                       (lonely / "share/spurcast").string() +
                       "; set SPURCAST_DATA_DIR to the folder that holds them\n");
    r = run_program(work, lonely / "spurcast", {"limits"}, root,
                    "SPURCAST_DATA_DIR=" + shell_quote((moved / "share/spurcast").string()));
    CHECK(r.exit_code == 0);
    CHECK(r.out.rfind("shipped limit files (" + (moved / "share/spurcast/limits").string() + "):\n",
                      0) == 0);
    // An override that holds no data is an error, never silently passed over.
    r = run_program(work, spurcast, {"demo", "-o", "never"}, root,
                    "SPURCAST_DATA_DIR=" + shell_quote(root.string()));
    CHECK(r.exit_code == 2);
    CHECK(r.err ==
          "spurcast: error: cannot find spurcast's data (limits/, examples/): looked in " +
              root.string() +
              " (from SPURCAST_DATA_DIR); set SPURCAST_DATA_DIR to the folder that holds them\n");
    CHECK_FALSE(fs::exists(work / "never"));
  }
  SUBCASE("a library user's project builds against the moved prefix with find_package(spurcast)") {
    const fs::path build = root / "consumer-build";
    const std::string sanitize_flags = SPURCAST_SANITIZE_FLAGS;
    const std::string consumer_flags =
        sanitize_flags.empty() ? std::string()
                               : " -DCMAKE_CXX_FLAGS=" + shell_quote(sanitize_flags) +
                                     " -DCMAKE_EXE_LINKER_FLAGS=" + shell_quote(sanitize_flags);
    r = run_shell(
        root,
        shell_quote(SPURCAST_CMAKE_COMMAND) + " -S " + shell_quote(source_dir + "/tests/consumer") +
            " -B " + shell_quote(build.string()) +
            " -DCMAKE_BUILD_TYPE=Release -DCMAKE_CXX_COMPILER=" +
            shell_quote(SPURCAST_CXX_COMPILER) +
            " -DCMAKE_PREFIX_PATH=" + shell_quote(moved.string()) + consumer_flags + " && " +
            shell_quote(SPURCAST_CMAKE_COMMAND) + " --build " + shell_quote(build.string()),
        root);
    INFO(r.out, r.err);
    REQUIRE(r.exit_code == 0);
    // The consumer compiled against the moved tree's headers, not the source tree's.
    CHECK(read_text(build / "CMakeCache.txt").find("spurcast_DIR:PATH=" + moved.string()) !=
          std::string::npos);
    r = run_program(work, build / "spurcast_consumer", {(moved / "share/spurcast").string()}, root);
    REQUIRE(r.exit_code == 0);
    // Paul, Introduction to Electromagnetic Compatibility, 2nd ed., §3.2: a trapezoid of amplitude
    // A, duty D (pulse width at half amplitude over the period T) and equal edges t_r has two-sided
    // coefficients |c_k| = A·D·|sinc(kπD)|·|sinc(kπ·t_r/T)|, sinc(x) = sin(x)/x; RMS = √2·|c_k|.
    const double amplitude_v = 48.0;
    const double duty = 0.25;
    const double frequency_hz = 220e3;
    const double rise_s = 12e-9;
    const double tol_relative = 1e-9;  // both sides are closed forms in double precision
    auto sinc = [](double x) { return std::sin(x) / x; };
    int checked = 0;
    for (const std::string& line : lines_of(r.out)) {
      std::istringstream in(line);
      std::string word;
      in >> word;
      if (word == "limit") {
        CHECK(line == "limit CISPR 32 class B, AC mains port");
        ++checked;
        continue;
      }
      REQUIRE(word == "harmonic");
      int k = 0;
      double f_hz = 0.0;
      double rms_v = 0.0;
      in >> k >> f_hz >> rms_v;
      CAPTURE(k);
      const double expected_v = std::sqrt(2.0) * amplitude_v * duty *
                                std::abs(sinc(k * std::numbers::pi * duty)) *
                                std::abs(sinc(k * std::numbers::pi * rise_s * frequency_hz));
      CHECK(std::abs(f_hz - k * frequency_hz) <= tol_relative * k * frequency_hz);
      CHECK(std::abs(rms_v - expected_v) <= tol_relative * expected_v);
      ++checked;
    }
    CHECK(checked == 5);
  }
  fs::remove_all(root);
}

TEST_CASE("cpack -G DEB makes a package with the program, its data and its runtime dependencies") {
  const fs::path root = outside_directory("deb");
  RunResult r = run_shell(root,
                          shell_quote(SPURCAST_CPACK_COMMAND) + " -G DEB --config " +
                              shell_quote(binary_dir + "/CPackConfig.cmake") + " -B " +
                              shell_quote(root.string()),
                          root);
  INFO(r.out, r.err);
  REQUIRE(r.exit_code == 0);
  fs::path deb;
  for (const auto& entry : fs::directory_iterator(root)) {
    if (entry.path().extension() == ".deb") deb = entry.path();
  }
  REQUIRE_FALSE(deb.empty());
  CHECK(deb.filename().string().rfind("spurcast_", 0) == 0);

  r = run_shell(root, "dpkg-deb -c " + shell_quote(deb.string()), root);
  REQUIRE(r.exit_code == 0);
  for (const char* file :
       {"./usr/bin/spurcast", "./usr/share/spurcast/limits/cispr32-class-b-conducted.toml",
        "./usr/share/spurcast/limits/fcc15-107-class-b-conducted.toml",
        "./usr/share/spurcast/limits/bands/region1.toml",
        "./usr/share/spurcast/examples/greenhouse-buck.toml", "./usr/share/man/man1/spurcast.1",
        "./usr/include/spurcast/spurcast.hpp"}) {
    CAPTURE(file);
    CHECK(r.out.find(std::string(" ") + file + "\n") != std::string::npos);
  }

  // Every shared library the executable needs (its NEEDED entries) belongs to a package that the
  // .deb declares, as dpkg's own database says (dpkg -S).
  r = run_shell(root, "dpkg-deb -f " + shell_quote(deb.string()) + " Depends", root);
  REQUIRE(r.exit_code == 0);
  const std::string depends = r.out;
  std::set<std::string> declared;
  for (const std::string& clause :
       lines_of(std::regex_replace(depends, std::regex(R"(\s*\([^)]*\)\s*,?\s*|,\s*)"), "\n"))) {
    if (!clause.empty()) declared.insert(clause);
  }
  r = run_shell(
      root, "objdump -p " + shell_quote(binary_dir + "/spurcast") + " | awk '/NEEDED/ {print $2}'",
      root);
  REQUIRE(r.exit_code == 0);
  const std::vector<std::string> needed = lines_of(r.out);
  CHECK(needed.size() >= 3);
  r = run_shell(root, shell_quote(SPURCAST_CXX_COMPILER) + " -print-multiarch", root);
  REQUIRE(r.exit_code == 0);
  const std::string multiarch = lines_of(r.out).at(0);  // x86_64-linux-gnu on amd64
  for (const std::string& library : needed) {
    CAPTURE(library);
    // A sanitizer build (SPURCAST_SANITIZE) links the sanitizer runtimes, which a release package
    // does not need.
    const bool sanitizer_runtime =
        library.rfind("libasan", 0) == 0 || library.rfind("libubsan", 0) == 0;
    if (sanitizer_runtime && !std::string(SPURCAST_SANITIZE_FLAGS).empty()) continue;
    // The package that ships the library for this architecture (not a lib32 or i386 copy).
    const RunResult owner = run_shell(
        root, "dpkg -S " + shell_quote("*/" + multiarch + "/" + library) + " | head -1", root);
    REQUIRE(owner.exit_code == 0);
    const std::string package = owner.out.substr(0, owner.out.find_first_of(":"));
    CAPTURE(package);
    CHECK(declared.count(package) == 1);
  }

  // The unpacked tree runs the demo from another folder.
  const fs::path unpacked = root / "unpacked";
  const fs::path work = root / "work";
  fs::create_directories(work);
  r = run_shell(root,
                "dpkg-deb -x " + shell_quote(deb.string()) + " " + shell_quote(unpacked.string()),
                root);
  REQUIRE(r.exit_code == 0);
  r = run_program(work, unpacked / "usr/bin/spurcast", {"demo", "-o", "demo-out"}, root);
  INFO(r.out, r.err);
  CHECK(r.exit_code == 0);
  CHECK(fs::is_regular_file(work / "demo-out" / "report.html"));
  check_names_none_of(outputs_of(r, work / "demo-out"), {source_dir, binary_dir});
  fs::remove_all(root);
}

TEST_CASE("the man page names every command and option that --help shows") {
  const std::string man = read_text(source_dir + "/docs/spurcast.1");
  REQUIRE_FALSE(man.empty());
  const fs::path scratch = outside_directory("man");
  auto roff = [](const std::string& text) {
    return std::regex_replace(text, std::regex("-"), "\\-");
  };
  RunResult r = run_program(scratch, SPURCAST_EXECUTABLE, {"--help"}, scratch);
  REQUIRE(r.exit_code == 0);
  // "Subcommands:" lines: two spaces, the command, its description.
  std::vector<std::string> commands;
  bool in_commands = false;
  for (const std::string& line : lines_of(r.out)) {
    if (line == "Subcommands:") {
      in_commands = true;
      continue;
    }
    std::smatch m;
    if (in_commands && std::regex_match(line, m, std::regex(R"(  ([a-z]+) .*)")))
      commands.push_back(m[1]);
  }
  CHECK(commands.size() >= 8);
  for (const std::string& command : commands) {
    CAPTURE(command);
    CHECK(man.find(".B spurcast " + command) != std::string::npos);  // in the synopsis
    r = run_program(scratch, SPURCAST_EXECUTABLE, {command, "--help"}, scratch);
    REQUIRE(r.exit_code == 0);
    const std::regex option(R"((^|[ ,])(--?[a-z][a-z-]*))");
    for (auto it = std::sregex_iterator(r.out.begin(), r.out.end(), option);
         it != std::sregex_iterator(); ++it) {
      const std::string name = (*it)[2];
      if (name.size() < 2 || name == "-h") continue;  // "-h,--help" is checked as --help
      CAPTURE(name);
      CHECK(man.find(roff(name)) != std::string::npos);
    }
  }
  for (const char* section :
       {".SH EXIT STATUS", ".SH ENVIRONMENT", ".SH FILES", ".SH SAFETY", "SPURCAST_DATA_DIR"}) {
    CAPTURE(section);
    CHECK(man.find(section) != std::string::npos);
  }
  fs::remove_all(scratch);
}

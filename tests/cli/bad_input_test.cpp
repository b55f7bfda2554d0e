// The bad-input corpus, end to end through the CLI (issue 9): every case under tests/data/bad/<loader>/
// must make `spurcast` exit with code 2 (docs/design.md §4: "2 = bad input or usage"), print exactly the
// expected message as the first line of stderr, and create nothing at the output path it was given,
// within a cap of 1 GiB of address space and 60 s.
//
// Layout of a loader folder:
//   command            the arguments, one line, e.g. `spectrum --capture {input} --csv {out}`;
//                      {input} is the case's input file, {out} an output path in a fresh folder
//   <case>.<ext>       the input (exactly one file with that stem besides the two below)
//   <case>.expected    the exact first stderr line, e.g. `spurcast: error: x.toml:3:9: expected ...`;
//                      {source_dir} stands for the repository root, {data_dir} for the executable's
//                      data folder (<build>/share/spurcast, where shipped limit files are found)
//   <case>.command     optional: arguments for this case instead of the folder's `command`
// The CLI runs with the loader folder as its working directory and the bare file name, so messages
// name the file as the user typed it. Other files (side inputs a case refers to) have no .expected.
// A subcommand that the executable does not offer (yet) skips its cases with a message.
#include <doctest/doctest.h>

#include "cli_support.hpp"

#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>
#include <string>
#include <vector>

namespace fs = std::filesystem;

namespace {

using spurcast::test::read_text;
using spurcast::test::run_cli;
using spurcast::test::RunResult;
using spurcast::test::shell_quote;

const fs::path source_dir = SPURCAST_SOURCE_DIR;
const std::string executable = SPURCAST_EXECUTABLE;

std::string first_line(const std::string& text) {
  std::string line = text.substr(0, text.find('\n'));
  if (!line.empty() && line.back() == '\r') line.pop_back();
  return line;
}

std::vector<std::string> split_words(const std::string& line) {
  std::istringstream in(line);
  std::vector<std::string> words;
  std::string word;
  while (in >> word) words.push_back(word);
  return words;
}

void replace_all(std::string& text, const std::string& from, const std::string& to) {
  for (std::size_t at = text.find(from); at != std::string::npos; at = text.find(from, at + to.size())) {
    text.replace(at, from.size(), to);
  }
}

// Every run is capped in address space and time (prlimit, timeout), so that an allocation made
// before its check, or a read that never ends, fails the test instead of taking the machine
// (issue 14).
constexpr long long memory_cap_bytes = 1LL << 30;  // 1 GiB: a normal predict peaks near 200 MB
constexpr int time_cap_s = 60;

// AddressSanitizer reserves terabytes of shadow address space at start-up, so under it the
// address-space cap would stop every run before main; there the time cap alone applies.
#if defined(__SANITIZE_ADDRESS__)
constexpr bool cap_address_space = false;
#elif defined(__has_feature)
#if __has_feature(address_sanitizer)
constexpr bool cap_address_space = false;
#else
constexpr bool cap_address_space = true;
#endif
#else
constexpr bool cap_address_space = true;
#endif

RunResult run_capped(const fs::path& directory, const std::vector<std::string>& arguments, const fs::path& scratch) {
  const std::string memory_cap = cap_address_space ? "prlimit --as=" + std::to_string(memory_cap_bytes) + " " : "";
  return run_cli(directory, arguments, scratch, memory_cap + "timeout -k 5 " + std::to_string(time_cap_s));
}

struct Case {
  fs::path folder;
  std::string stem;
  fs::path input;
  std::string command_line;
  std::string expected;
};

std::vector<Case> collect_cases() {
  std::vector<Case> cases;
  const fs::path root = source_dir / "tests" / "data" / "bad";
  if (!fs::exists(root)) return cases;
  std::vector<fs::path> folders;
  for (const auto& entry : fs::directory_iterator(root)) {
    if (entry.is_directory()) folders.push_back(entry.path());
  }
  std::sort(folders.begin(), folders.end());
  for (const fs::path& folder : folders) {
    const fs::path command_file = folder / "command";
    const std::string folder_command = fs::exists(command_file) ? first_line(read_text(command_file)) : "";
    std::vector<fs::path> files;
    for (const auto& entry : fs::directory_iterator(folder)) files.push_back(entry.path());
    std::sort(files.begin(), files.end());
    for (const fs::path& expected_file : files) {
      if (expected_file.extension() != ".expected") continue;
      Case c;
      c.folder = folder;
      c.stem = expected_file.stem().string();
      c.expected = first_line(read_text(expected_file));
      replace_all(c.expected, "{source_dir}", source_dir.string());
      replace_all(c.expected, "{data_dir}", (fs::path(SPURCAST_EXECUTABLE).parent_path() / "share/spurcast").string());
      for (const fs::path& f : files) {
        if (f.stem() == c.stem && f.extension() != ".expected" && f.extension() != ".command") c.input = f;
      }
      const fs::path own_command = folder / (c.stem + ".command");
      c.command_line = fs::exists(own_command) ? first_line(read_text(own_command)) : folder_command;
      cases.push_back(c);
    }
  }
  return cases;
}

}  // namespace

TEST_CASE("every bad input is refused with its message, exit code 2 and no output") {
  const std::vector<Case> cases = collect_cases();
  REQUIRE(cases.size() >= 20);
  const fs::path scratch_root = fs::temp_directory_path() / ("spurcast-bad-input-" + std::to_string(::getpid()));
  fs::create_directories(scratch_root);
  std::map<std::string, bool> available;  // subcommand -> offered by the executable
  std::map<std::string, int> skipped;
  int checked = 0;
  for (const Case& c : cases) {
    const std::string label = c.folder.filename().string() + "/" + c.stem;
    CAPTURE(label);
    REQUIRE_MESSAGE(!c.input.empty(), "no input file beside " << label << ".expected");
    REQUIRE_MESSAGE(!c.command_line.empty(), "no command for " << label);
    std::vector<std::string> words = split_words(c.command_line);
    const std::string subcommand = words.front();
    if (!available.count(subcommand)) {
      const RunResult help = run_cli(c.folder, {subcommand, "--help"}, scratch_root);
      available[subcommand] = help.exit_code == 0;
    }
    if (!available[subcommand]) {
      ++skipped[subcommand];
      continue;
    }
    const fs::path scratch = scratch_root / label;
    const fs::path out_folder = scratch / "out";
    fs::create_directories(out_folder);
    for (std::string& w : words) {
      replace_all(w, "{input}", c.input.filename().string());
      replace_all(w, "{out}", (out_folder / "result").string());
    }
    const RunResult result = run_capped(c.folder, words, scratch);
    CAPTURE(result.err);
    CAPTURE(result.out);
    CAPTURE(c.command_line);
    CHECK(result.exit_code == 2);
    CHECK(first_line(result.err) == c.expected);
    // Nothing written on error: not the output itself, nor a temporary sibling of it.
    CHECK(fs::is_empty(out_folder));
    ++checked;
  }
  for (const auto& [subcommand, count] : skipped) {
    MESSAGE("skipped " << count << " case(s): the executable has no '" << subcommand << "' subcommand yet");
  }
  MESSAGE("checked " << checked << " bad-input case(s)");
  CHECK(checked > 0);
  fs::remove_all(scratch_root);
}

// Hostile inputs too large, or of a kind (pipes, devices), that the corpus cannot hold: built at
// test time, each run under the same caps (issue 14).
namespace {

std::string dotted_key(int parts) {
  std::string key = "k";
  key.reserve(static_cast<std::size_t>(parts) * 2);
  for (int i = 1; i < parts; ++i) key += ".k";
  return key;
}

const std::string small_trace = "frequency_hz,level_dbuv\n150000,60\n160000,61\n";

}  // namespace

TEST_CASE("a table header of 300,000 parts is refused at its position by every TOML loader, without a crash") {
  const fs::path dir = spurcast::test::fresh_directory("spurcast-deep-", std::to_string(::getpid()));
  spurcast::test::write_text(dir / "deep.toml", "[" + dotted_key(300000) + "]\n");
  spurcast::test::write_text(dir / "trace.csv", small_trace);
  const std::string expected =
      "spurcast: error: deep.toml:1:129: keys, tables and arrays nested more than 64 levels deep (each part of a "
      "dotted key counts one level)";
  for (const std::vector<std::string>& arguments :
       {std::vector<std::string>{"predict", "deep.toml", "-o", "out"}, std::vector<std::string>{"limits", "deep.toml"},
        std::vector<std::string>{"compare", "trace.csv", "--limits", "deep.toml", "--csv", "out.csv"}}) {
    CAPTURE(arguments.front());
    const RunResult result = run_capped(dir, arguments, dir);
    CHECK(result.exit_code == 2);
    CHECK(first_line(result.err) == expected);
    CHECK(!fs::exists(dir / "out"));
    CHECK(!fs::exists(dir / "out.csv"));
  }
  fs::remove_all(dir);
}

TEST_CASE("a FIFO with no writer, /dev/zero and a directory are refused by every loader, without blocking") {
  const fs::path dir = spurcast::test::fresh_directory("spurcast-fifo-", std::to_string(::getpid()));
  REQUIRE(::mkfifo((dir / "pipe").c_str(), 0600) == 0);
  fs::create_directories(dir / "folder");
  spurcast::test::write_text(dir / "trace.csv", small_trace);
  const std::string switching =
      "[switching]\nfrequency = \"220 kHz\"\nduty = 0.25\namplitude = \"48 V\"\ncurrent = \"6 A\"\nrise = \"12 ns\"\n"
      "fall = \"15 ns\"\n";
  spurcast::test::write_text(dir / "capture-pipe.toml",
                             "[capture]\nfile = \"pipe\"\nquantity = \"voltage\"\nfrequency = \"150 kHz\"\n");
  spurcast::test::write_text(dir / "limits-pipe.toml", switching + "[limits]\nfiles = [\"pipe\"]\n");
  spurcast::test::write_text(dir / "plan-pipe.toml", switching + "[broadcast]\nregion = 1\nplan = \"./pipe\"\n");
  struct Run {
    std::vector<std::string> arguments;
    std::string message;
  };
  const std::vector<Run> runs = {
      {{"predict", "pipe", "-o", "out"}, "pipe: is a named pipe, expected a scenario file"},
      {{"predict", "/dev/zero", "-o", "out"}, "/dev/zero: is a character device, expected a scenario file"},
      {{"predict", "folder", "-o", "out"}, "folder: is a directory, expected a scenario file"},
      {{"sweep", "pipe", "--vary", "switching.duty=0.2:0.3:3"}, "pipe: is a named pipe, expected a scenario file"},
      {{"predict", "capture-pipe.toml", "-o", "out"}, "pipe: is a named pipe, expected a capture file"},
      {{"predict", "limits-pipe.toml", "-o", "out"}, "pipe: is a named pipe, expected a limit file"},
      {{"predict", "plan-pipe.toml", "-o", "out"}, "plan-pipe.toml:10:8: ./pipe: is a named pipe, expected a band plan"},
      {{"spectrum", "--capture", "pipe", "--csv", "out.csv"}, "pipe: is a named pipe, expected a capture file"},
      {{"spectrum", "--capture", "/dev/zero", "--csv", "out.csv"}, "/dev/zero: is a character device, expected a capture file"},
      {{"compare", "pipe", "--limits", "cispr32-class-b-conducted", "--csv", "out.csv"},
       "pipe: is a named pipe, expected a trace file"},
      {{"compare", "/dev/zero", "--limits", "cispr32-class-b-conducted", "--csv", "out.csv"},
       "/dev/zero: is a character device, expected a trace file"},
      {{"compare", "trace.csv", "--limits", "pipe", "--csv", "out.csv"}, "pipe: is a named pipe, expected a limit file"},
      {{"compare", "trace.csv", "--limits", "cispr32-class-b-conducted", "--correction", "pipe", "--csv", "out.csv"},
       "pipe: is a named pipe, expected a correction table"},
      {{"limits", "pipe"}, "pipe: is a named pipe, expected a limit file"},
  };
  for (const Run& run : runs) {
    CAPTURE(run.message);
    const RunResult result = run_capped(dir, run.arguments, dir);
    CHECK(result.exit_code == 2);
    CHECK(first_line(result.err) == "spurcast: error: " + run.message);
    CHECK(!fs::exists(dir / "out"));
    CHECK(!fs::exists(dir / "out.csv"));
  }
  fs::remove_all(dir);
}

TEST_CASE("an amplitude at its bound gives finite levels everywhere; one above is refused at its key") {
  // 1 MV is max_amplitude_v (core/source/source.hpp). Before issue 14, 1e308 V was taken: predict
  // never finished (its plot axis loop), scan wrote "inf" and JSON "null".
  const fs::path dir = spurcast::test::fresh_directory("spurcast-amplitude-", std::to_string(::getpid()));
  std::string scenario = read_text(source_dir / "examples" / "greenhouse-buck.toml");
  const std::string swing = "amplitude = \"48 V\"";
  REQUIRE(scenario.find(swing) != std::string::npos);
  scenario.replace(scenario.find(swing), swing.size(), "amplitude = \"1 MV\"");
  spurcast::test::write_text(dir / "at-bound.toml", scenario);
  const RunResult predict = run_capped(dir, {"predict", "at-bound.toml", "-o", "report"}, dir);
  CAPTURE(predict.err);
  CHECK((predict.exit_code == 0 || predict.exit_code == 1));
  for (const auto& entry : fs::directory_iterator(dir / "report")) {
    if (entry.path().extension() != ".csv") continue;
    const std::string text = read_text(entry.path());
    CAPTURE(entry.path().filename().string());
    CHECK(text.find("inf") == std::string::npos);
    CHECK(text.find("nan") == std::string::npos);
  }
  const RunResult scan = run_capped(dir, {"scan", "at-bound.toml", "--json"}, dir);
  CHECK(scan.exit_code == 0);
  CHECK(scan.out.find("null") == std::string::npos);
  CHECK(scan.out.find("inf") == std::string::npos);

  scenario.replace(scenario.find("amplitude = \"1 MV\""), std::string("amplitude = \"1 MV\"").size(),
                   "amplitude = \"1.001 MV\"");
  spurcast::test::write_text(dir / "above-bound.toml", scenario);
  const RunResult above = run_capped(dir, {"scan", "above-bound.toml", "--csv", "scan.csv"}, dir);
  CHECK(above.exit_code == 2);
  CHECK(first_line(above.err) ==
        "spurcast: error: above-bound.toml:9:13: expected an amplitude of at most 1 MV (beyond any power converter; "
        "larger swings overflow the levels), found 1.001 MV");
  CHECK(!fs::exists(dir / "scan.csv"));
  fs::remove_all(dir);
}

TEST_CASE("usage errors are one line, and a thread count states its range as 1..N") {
  const fs::path dir = spurcast::test::fresh_directory("spurcast-usage-", std::to_string(::getpid()));
  fs::copy_file(source_dir / "examples" / "greenhouse-buck.toml", dir / "s.toml");
  struct Run {
    std::vector<std::string> arguments;
    std::string message;
  };
  const std::vector<Run> runs = {
      // Before issue 14: CLI11's own second line, and for 0 a range up to a 309-digit number.
      {{"scan", "s.toml", "--threads", "0"},
       "spurcast: error: --threads: expected a thread count of 1..256, found \"0\" (see --help)"},
      {{"sweep", "s.toml", "--vary", "switching.duty=0.2:0.3:3", "--threads", "100000"},
       "spurcast: error: --threads: expected a thread count of 1..256, found \"100000\" (see --help)"},
      {{"predict", "s.toml", "--no-such-option"},
       "spurcast: error: The following argument was not expected: --no-such-option (see --help)"},
  };
  for (const Run& run : runs) {
    CAPTURE(run.message);
    const RunResult result = run_capped(dir, run.arguments, dir);
    CHECK(result.exit_code == 2);
    CHECK(result.err == run.message + "\n");  // the whole of stderr: one line
  }
  const RunResult environment = run_cli(dir, {"sweep", "s.toml", "--vary", "switching.duty=0.2:0.3:3"}, dir,
                                        "SPURCAST_THREADS=0");
  CHECK(environment.exit_code == 2);
  CHECK(environment.err == "spurcast: error: SPURCAST_THREADS: expected a thread count of 1..256, found \"0\"\n");
  fs::remove_all(dir);
}

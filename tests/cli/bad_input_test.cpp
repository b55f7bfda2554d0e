// The bad-input corpus, end to end through the CLI (issue 9): every case under tests/data/bad/<loader>/
// must make `spurcast` exit with code 2 (docs/design.md §4: "2 = bad input or usage"), print exactly the
// expected message as the first line of stderr, and create nothing at the output path it was given.
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
    const RunResult result = run_cli(c.folder, words, scratch);
    CAPTURE(result.err);
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

// The README's quick start is interface: exactly two commands, Debian packages only, the first
// builds and runs the demo, the second runs the whole suite and is the command .ci/run runs.
// Common practice: a CI script that drifts from the documented command hides a broken set-up.
#include <doctest/doctest.h>

#include <fstream>
#include <sstream>
#include <string>
#include <vector>

namespace {

std::string read_file(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream text;
  text << in.rdbuf();
  return text.str();
}

/// The contents of the ```sh blocks between `## Quick start` and the next `## ` heading.
std::vector<std::string> quick_start_commands(const std::string& readme) {
  std::vector<std::string> commands;
  const std::size_t start = readme.find("## Quick start");
  if (start == std::string::npos) return commands;
  const std::size_t end = readme.find("\n## ", start + 1);
  const std::string section = readme.substr(start, end == std::string::npos ? std::string::npos : end - start);
  std::size_t at = 0;
  while ((at = section.find("```sh\n", at)) != std::string::npos) {
    const std::size_t body = at + 6;
    const std::size_t close = section.find("\n```", body);
    if (close == std::string::npos) break;
    commands.push_back(section.substr(body, close - body));
    at = close + 4;
  }
  return commands;
}

}  // namespace

TEST_CASE("the README gives exactly two set-up commands and .ci/run runs the second") {
  const std::string root = SPURCAST_SOURCE_DIR;
  const std::string readme = read_file(root + "/README.md");
  const std::vector<std::string> commands = quick_start_commands(readme);
  REQUIRE(commands.size() == 2);
  for (const std::string& command : commands) {
    CAPTURE(command);
    CHECK(command.find('\n') == std::string::npos);  // one command line each
    CHECK(command.rfind("apt-get update && apt-get install -y ", 0) == 0);
    CHECK(command.find("pip") == std::string::npos);
    CHECK(command.find("curl") == std::string::npos);
  }
  const std::string demo = "./build/spurcast demo";
  REQUIRE(commands[0].size() > demo.size());
  CHECK(commands[0].substr(commands[0].size() - demo.size()) == demo);
  CHECK(commands[1].find("ctest --test-dir build") != std::string::npos);
  const std::string ci = read_file(root + "/.ci/run");
  CHECK(ci.find("\n" + commands[1] + "\n") != std::string::npos);
}

TEST_CASE("the README opens with the job and carries the safety cautions") {
  const std::string readme = read_file(std::string(SPURCAST_SOURCE_DIR) + "/README.md");
  const std::size_t first_text = readme.find("\n\n") + 2;
  const std::string paragraph = readme.substr(first_text, readme.find("\n\n", first_text) - first_text);
  CHECK(paragraph.size() > 200);
  CHECK(readme.find("## Safety cautions") != std::string::npos);
  CHECK(readme.find("not a compliance result") != std::string::npos);
  CHECK(readme.find("protective earth") != std::string::npos);
}

// End-to-end tests of the user's files (issue 14): what spurcast may replace, what it refuses, and
// the exit code of an output that could not be written (docs/design.md §4: 3, apart from bad
// input's 2). External reference: the Linux file semantics the checks rely on (lstat file types,
// rename(2), flock(2)) as documented in the Linux man-pages project (from memory).
#include <doctest/doctest.h>
#include <fcntl.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <sys/sysmacros.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <csignal>
#include <cstdlib>
#include <filesystem>
#include <map>
#include <string>
#include <vector>

#include "cli_support.hpp"

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
  for (const auto& entry : fs::directory_iterator(folder))
    names.push_back(entry.path().filename().string());
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

TEST_CASE(
    "predict -o the scenario's own folder (it holds a summary.json) is refused, exit 3, nothing "
    "deleted") {
  Scratch s;
  const fs::path project = s.root / "project";
  fs::create_directories(project);
  fs::copy_file(example, project / "buck.toml");
  write_text(project / "summary.json", "{\"mine\": true}\n");
  const RunResult r = run_cli(s.root, {"predict", "project/buck.toml", "-o", "project"}, s.io);
  CHECK(r.exit_code == 3);
  CHECK(r.err ==
        "spurcast: error: project is not empty and was not written by spurcast (no "
        ".spurcast-output marker); "
        "choose another folder\n");
  CHECK(names_in(project) == std::vector<std::string>{"buck.toml", "summary.json"});
  CHECK(read_text(project / "summary.json") == "{\"mine\": true}\n");
  CHECK(names_in(s.root) ==
        std::vector<std::string>{"io", "project"});  // no temporary left beside it
}

TEST_CASE("predict -o \"$PWD\" with the scenario in it is refused, exit 3, the scenario survives") {
  Scratch s;
  const fs::path here = s.root / "here";
  fs::create_directories(here);
  fs::copy_file(example, here / "buck.toml");
  const RunResult r = run_cli(here, {"predict", "buck.toml", "-o", here.string()}, s.io);
  CHECK(r.exit_code == 3);
  CHECK(r.err == "spurcast: error: " + here.string() +
                     " is not empty and was not written by spurcast (no .spurcast-output marker); "
                     "choose another folder\n");
  CHECK(names_in(here) == std::vector<std::string>{"buck.toml"});
  CHECK(read_text(here / "buck.toml") == read_text(example));
}

TEST_CASE(
    "a report folder is replaced by a rerun; once the user adds a file to it, it is refused") {
  Scratch s;
  REQUIRE(run_cli(s.root, {"predict", example.string(), "-o", "out"}, s.io).exit_code <= 1);
  REQUIRE(run_cli(s.root, {"predict", example.string(), "-o", "out"}, s.io).exit_code <= 1);
  write_text(s.root / "out" / "notes.txt", "measured on the bench\n");
  const RunResult r = run_cli(s.root, {"predict", example.string(), "-o", "out"}, s.io);
  CHECK(r.exit_code == 3);
  CHECK(r.err ==
        "spurcast: error: out holds files spurcast did not write (notes.txt); move them or choose "
        "another folder\n");
  CHECK(read_text(s.root / "out" / "notes.txt") == "measured on the bench\n");
  CHECK(fs::exists(s.root / "out" / "report.html"));
}

namespace {

/// Everything in `folder` with its bytes (a report, compared whole).
std::map<std::string, std::string> contents_of(const fs::path& folder) {
  std::map<std::string, std::string> files;
  for (const auto& entry : fs::directory_iterator(folder))
    files[entry.path().filename().string()] = read_text(entry.path());
  return files;
}

/// Starts `spurcast ARGS...` in `directory` with no output; returns its process id.
pid_t spawn(const fs::path& directory, const std::vector<std::string>& arguments) {
  const pid_t child = ::fork();
  if (child != 0) return child;
  if (::chdir(directory.c_str()) != 0) std::_Exit(126);
  const int null = ::open("/dev/null", O_RDWR);
  ::dup2(null, 0);
  ::dup2(null, 1);
  ::dup2(null, 2);
  std::vector<char*> argv;
  std::string program = SPURCAST_EXECUTABLE;
  argv.push_back(program.data());
  std::vector<std::string> copies = arguments;
  for (std::string& a : copies) argv.push_back(a.data());
  argv.push_back(nullptr);
  ::execv(program.c_str(), argv.data());
  std::_Exit(127);
}

/// True once `folder` holds an entry whose name starts with `prefix` and (for a folder) holds at
/// least `files` entries.
bool appeared(const fs::path& folder, const std::string& prefix, std::size_t files) {
  std::error_code code;
  for (fs::directory_iterator it(folder, code), end; !code && it != end; it.increment(code)) {
    const std::string name = it->path().filename().string();
    if (name.rfind(prefix, 0) != 0) continue;
    if (files == 0) return true;
    std::size_t count = 0;
    std::error_code inner;
    for (fs::directory_iterator f(it->path(), inner), e; !inner && f != e; f.increment(inner))
      ++count;
    if (!inner && count >= files) return true;
  }
  return false;
}

}  // namespace

TEST_CASE(
    "SIGTERM to a running predict at several points of its write leaves no temporary and the old "
    "report whole") {
  Scratch s;
  const fs::path other = source_dir / "examples" / "boat-cabin-led.toml";
  REQUIRE(run_cli(s.root, {"predict", other.string(), "-o", "out"}, s.io).exit_code <= 1);
  const std::map<std::string, std::string> old_report = contents_of(s.root / "out");
  REQUIRE(run_cli(s.io, {"predict", example.string(), "-o", "new"}, s.io).exit_code <= 1);
  const std::map<std::string, std::string> new_report = contents_of(s.io / "new");
  REQUIRE(old_report != new_report);

  // The moments to stop it: its lock file appears, its temporary folder appears, the temporary
  // holds 1, 4, 8 files (the report has 11 and the marker). The parent watches the folder and
  // sends SIGTERM when it sees the moment; a run that ends first has finished its report.
  struct Point {
    std::string prefix;
    std::size_t files;
  };
  const std::vector<Point> points{
      {"out.spurcast-lock", 0}, {"out.tmp-", 0}, {"out.tmp-", 1}, {"out.tmp-", 4}, {"out.tmp-", 8}};
  int stopped_while_writing = 0;
  for (const Point& point : points) {
    CAPTURE(point.prefix);
    CAPTURE(point.files);
    const pid_t child = spawn(s.root, {"predict", example.string(), "-o", "out"});
    REQUIRE(child > 0);
    int status = 0;
    bool ended = false;
    while (!ended) {
      if (appeared(s.root, point.prefix, point.files)) {
        ::kill(child, SIGTERM);
        break;
      }
      ended = ::waitpid(child, &status, WNOHANG) == child;
    }
    if (!ended) REQUIRE(::waitpid(child, &status, 0) == child);
    if (WIFSIGNALED(status)) {
      CHECK(WTERMSIG(status) == SIGTERM);
      ++stopped_while_writing;
    }
    // Only `out` and the scratch folder: no temporary folder, no lock file.
    CHECK(names_in(s.root) == std::vector<std::string>{"io", "out"});
    const std::map<std::string, std::string> now = contents_of(s.root / "out");
    CHECK((now == old_report || now == new_report));
    // Put the old report back for the next point (a finished run replaced it).
    if (now != old_report)
      REQUIRE(run_cli(s.root, {"predict", other.string(), "-o", "out"}, s.io).exit_code <= 1);
  }
  MESSAGE(stopped_while_writing << " of " << points.size()
                                << " runs were stopped by SIGTERM while writing");
}

TEST_CASE("a second run writing the same folder is refused with exit 3 while the first holds it") {
  Scratch s;
  // The first run is played by this test: it holds the lock beside `out` (flock(2), as a run does).
  const fs::path lock = s.root / "out.spurcast-lock";
  const int fd = ::open(lock.c_str(), O_RDWR | O_CREAT, 0644);
  REQUIRE(fd >= 0);
  REQUIRE(::flock(fd, LOCK_EX | LOCK_NB) == 0);
  const RunResult r = run_cli(s.root, {"predict", example.string(), "-o", "out"}, s.io);
  CHECK(r.exit_code == 3);
  CHECK(r.err ==
        "spurcast: error: another spurcast run is writing out at the same time; nothing was "
        "written\n");
  CHECK_FALSE(fs::exists(s.root / "out"));
  ::close(fd);  // the first run ends; its lock file is left as a SIGKILL would leave it
  CHECK(run_cli(s.root, {"predict", example.string(), "-o", "out"}, s.io).exit_code <= 1);
  CHECK(names_in(s.root) ==
        std::vector<std::string>{"io", "out"});  // the stale lock file was reused and removed
}

TEST_CASE(
    "two concurrent runs writing one folder: each either wins or exits 3 with the conflict "
    "message") {
  Scratch s;
  const fs::path a = s.root / "a";
  const fs::path b = s.root / "b";
  fs::create_directories(a);
  fs::create_directories(b);
  int conflicts = 0;
  for (int round = 0; round < 6; ++round) {
    const std::string command = "cd " + spurcast::test::shell_quote(s.root.string()) + " && ";
    const std::string run = spurcast::test::shell_quote(SPURCAST_EXECUTABLE) + " predict " +
                            spurcast::test::shell_quote(example.string()) + " -o out";
    const std::string both = command + "{ (" + run +
                             " >a/out.txt 2>a/err.txt; echo $? >a/code.txt) & (" + run +
                             " >b/out.txt 2>b/err.txt; echo $? >b/code.txt) & wait; }";
    REQUIRE(std::system(both.c_str()) == 0);
    for (const fs::path& side : {a, b}) {
      const int code = std::stoi(read_text(side / "code.txt"));
      CAPTURE(code);
      CHECK((code <= 1 || code == 3));
      if (code == 3) {
        ++conflicts;
        CHECK(read_text(side / "err.txt") ==
              "spurcast: error: another spurcast run is writing out at the same time; nothing was "
              "written\n");
      }
    }
    CHECK(std::stoi(read_text(a / "code.txt")) + std::stoi(read_text(b / "code.txt")) <
          6);  // at least one wins
    CHECK(names_in(s.root) == std::vector<std::string>{"a", "b", "io", "out"});
    CHECK(fs::exists(s.root / "out" / "report.html"));
  }
  MESSAGE(conflicts << " of 6 rounds had a conflict");
}

TEST_CASE("sweep whose --plot cannot be written exits 3 and leaves no CSV (all outputs or none)") {
  Scratch s;
  const std::vector<std::string> sweep{"sweep", example.string(), "--vary",
                                       "switching.frequency=150kHz:300kHz:7"};
  std::vector<std::string> arguments = sweep;
  for (const char* a : {"--csv", "s.csv", "--plot", "nodir/p.svg"}) arguments.push_back(a);
  const RunResult missing = run_cli(s.root, arguments, s.io);
  CHECK(missing.exit_code == 3);
  CHECK(missing.err ==
        "spurcast: error: cannot write nodir/p.svg: the folder nodir does not exist\n");
  CHECK(names_in(s.root) == std::vector<std::string>{"io"});

  // An earlier CSV stays as it was when the plot's target is a folder.
  write_text(s.root / "s.csv", "earlier\n");
  fs::create_directories(s.root / "p.svg");
  arguments = sweep;
  for (const char* a : {"--csv", "s.csv", "--plot", "p.svg"}) arguments.push_back(a);
  const RunResult folder = run_cli(s.root, arguments, s.io);
  CHECK(folder.exit_code == 3);
  CHECK(folder.err ==
        "spurcast: error: cannot write p.svg: it is a folder, not a regular file; spurcast "
        "replaces only regular files\n");
  CHECK(read_text(s.root / "s.csv") == "earlier\n");
  CHECK(names_in(s.root) == std::vector<std::string>{"io", "p.svg", "s.csv"});

  // Both writable: both written.
  fs::remove(s.root / "p.svg");
  CHECK(run_cli(s.root, arguments, s.io).exit_code <= 1);
  CHECK(read_text(s.root / "s.csv").rfind("switching.frequency", 0) == 0);
  CHECK(read_text(s.root / "p.svg").find("<svg") != std::string::npos);
}

TEST_CASE(
    "--csv at a symbolic link, a FIFO or a device is refused with exit 3; the link's target is "
    "untouched") {
  Scratch s;
  write_text(s.root / "victim", "keep\n");
  fs::create_symlink(s.root / "victim", s.root / "link.csv");
  RunResult r = run_cli(s.root, {"scan", example.string(), "--csv", "link.csv"}, s.io);
  CHECK(r.exit_code == 3);
  CHECK(
      r.err ==
      "spurcast: error: cannot write link.csv: it is a symbolic link, not a regular file; spurcast "
      "replaces only regular files\n");
  CHECK(read_text(s.root / "victim") == "keep\n");
  REQUIRE(::mkfifo((s.root / "fifo.csv").c_str(), 0644) == 0);
  r = run_cli(s.root, {"scan", example.string(), "--csv", "fifo.csv"}, s.io);
  CHECK(r.exit_code == 3);
  CHECK(r.err ==
        "spurcast: error: cannot write fifo.csv: it is a FIFO, not a regular file; spurcast "
        "replaces only regular files\n");
  // A character device (1, 3: the Linux null device) can be made only by root.
  if (::mknod((s.root / "null.csv").c_str(), S_IFCHR | 0666, makedev(1, 3)) == 0) {
    r = run_cli(s.root, {"spectrum", example.string(), "--csv", "null.csv"}, s.io);
    CHECK(r.exit_code == 3);
    CHECK(r.err ==
          "spurcast: error: cannot write null.csv: it is a device, not a regular file; spurcast "
          "replaces "
          "only regular files\n");
    CHECK(fs::is_character_file(s.root / "null.csv"));
  } else {
    MESSAGE("device case skipped: mknod needs root");
  }
  CHECK(fs::is_symlink(s.root / "link.csv"));
  CHECK(fs::is_fifo(s.root / "fifo.csv"));
}

TEST_CASE("a symbolic link planted at the old temporary name FILE.tmp-PID is not followed") {
  Scratch s;
  write_text(s.root / "victim", "keep\n");
  // The shell plants the link at the name the CLI used before issue 14 ($$ is the PID that exec
  // keeps).
  const std::string command = "cd " + spurcast::test::shell_quote(s.root.string()) +
                              " && ln -s victim out.csv.tmp-$$ && exec " +
                              spurcast::test::shell_quote(SPURCAST_EXECUTABLE) + " scan " +
                              spurcast::test::shell_quote(example.string()) +
                              " --csv out.csv >/dev/null 2>&1";
  const int status = std::system(command.c_str());
  CHECK(WIFEXITED(status));
  CHECK(WEXITSTATUS(status) == 0);
  CHECK(read_text(s.root / "victim") == "keep\n");
  CHECK_FALSE(fs::is_symlink(s.root / "out.csv"));
  CHECK(read_text(s.root / "out.csv").rfind("frequency_hz,", 0) == 0);
}

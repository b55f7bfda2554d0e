// Tests of core/output/output_dir: the report folder appears complete or not at all.
// External reference: POSIX.1-2017 rename(): the rename is atomic, and a directory can replace only
// an empty directory (from memory of the specification), so a non-empty earlier report must be
// moved away first; these tests check the folder is whole at every moment a reader could see it.
#include "core/output/output_dir.hpp"

#include <doctest/doctest.h>
#include <sys/stat.h>
#include <sys/sysmacros.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <csignal>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <functional>
#include <map>
#include <sstream>
#include <string>
#include <vector>

#include "core/input/error.hpp"

namespace fs = std::filesystem;
using spurcast::OutputFile;
using spurcast::write_output_directory;

namespace {

std::string make_temp_dir() {
  std::string pattern = (fs::temp_directory_path() / "spurcast-output-dir-test-XXXXXX").string();
  REQUIRE(::mkdtemp(pattern.data()) != nullptr);
  return pattern;
}

std::string read_file(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream text;
  text << in.rdbuf();
  return text.str();
}

/// Names in `folder`, sorted.
std::vector<std::string> names_in(const fs::path& folder) {
  std::vector<std::string> names;
  for (const auto& entry : fs::directory_iterator(folder))
    names.push_back(entry.path().filename().string());
  std::sort(names.begin(), names.end());
  return names;
}

const std::vector<OutputFile> report_a{{"scan.csv", "frequency_hz\n1.0\n"},
                                       {"summary.json", "{\"run\": \"a\"}\n"}};
const std::vector<OutputFile> report_b{{"report.html", "<!DOCTYPE html>\n"},
                                       {"scan.csv", "frequency_hz\n2.0\n"},
                                       {"summary.json", "{\"run\": \"b\"}\n"}};

}  // namespace

TEST_CASE("a new folder holds exactly the files written, and no temporary folder is left") {
  const std::string base = make_temp_dir();
  const std::string target = base + "/report";
  write_output_directory(target, report_a);
  CHECK(names_in(target) ==
        std::vector<std::string>{".spurcast-output", "scan.csv", "summary.json"});
  CHECK(read_file(target + "/scan.csv") == "frequency_hz\n1.0\n");
  CHECK(names_in(base) == std::vector<std::string>{"report"});
  // The marker names the tool, its version and every file written.
  CHECK(read_file(target + "/.spurcast-output") ==
        "# written by spurcast, which replaces this folder only while it holds nothing but the "
        "files below\n"
        "tool: spurcast " SPURCAST_VERSION "\nfile: scan.csv\nfile: summary.json\n");
  fs::remove_all(base);
}

TEST_CASE("an earlier report is replaced as a whole; a trailing slash names the same folder") {
  const std::string base = make_temp_dir();
  const std::string target = base + "/report";
  write_output_directory(target, report_b);
  write_output_directory(target + "/", report_a);  // report.html of run b must not survive
  CHECK(names_in(target) ==
        std::vector<std::string>{".spurcast-output", "scan.csv", "summary.json"});
  CHECK(read_file(target + "/summary.json") == "{\"run\": \"a\"}\n");
  CHECK(names_in(base) == std::vector<std::string>{"report"});  // no .old- or .tmp- folder left
  fs::remove_all(base);
}

TEST_CASE("an empty existing folder is taken; a folder that is not a report is never touched") {
  const std::string base = make_temp_dir();
  fs::create_directory(base + "/empty");
  write_output_directory(base + "/empty", report_a);
  CHECK(names_in(base + "/empty").size() == 3);

  // The marker is .spurcast-output now (it was summary.json, which any folder may hold).
  fs::create_directory(base + "/mine");
  std::ofstream(base + "/mine/thesis.tex") << "precious";
  CHECK_THROWS_WITH_AS(write_output_directory(base + "/mine", report_a),
                       (base + "/mine is not empty and was not written by spurcast (no "
                               ".spurcast-output marker); choose another folder")
                           .c_str(),
                       spurcast::OutputError);
  CHECK(names_in(base + "/mine") == std::vector<std::string>{"thesis.tex"});

  std::ofstream(base + "/plain-file") << "x";
  CHECK_THROWS_WITH_AS(write_output_directory(base + "/plain-file", report_a),
                       (base + "/plain-file exists and is not a folder").c_str(),
                       spurcast::OutputError);
  CHECK(names_in(base) == std::vector<std::string>{"empty", "mine", "plain-file"});
  fs::remove_all(base);
}

TEST_CASE("bad names and a missing parent are refused before anything is written") {
  const std::string base = make_temp_dir();
  CHECK_THROWS_WITH_AS(write_output_directory(base + "/r", {{"../escape.csv", "x"}}),
                       "invalid output file name \"../escape.csv\"", spurcast::Error);
  CHECK_THROWS_WITH_AS(write_output_directory(base + "/r", {{"a.csv", "x"}, {"a.csv", "y"}}),
                       "output file \"a.csv\" listed twice", spurcast::Error);
  CHECK_THROWS_WITH_AS(
      write_output_directory(base + "/no/such/r", report_a),
      ("the folder " + base + "/no/such (parent of the output folder) does not exist").c_str(),
      spurcast::Error);
  CHECK_THROWS_WITH_AS(write_output_directory(".", report_a), "invalid output folder \".\"",
                       spurcast::Error);
  CHECK(names_in(base).empty());
  fs::remove_all(base);
}

TEST_CASE("a process killed while writing leaves no partial folder and keeps the earlier report") {
  const std::string base = make_temp_dir();
  const std::string target = base + "/report";
  write_output_directory(target, report_a);

  // The child dies (std::_Exit, like SIGKILL: no unwinding, no clean-up) after 2 of 3 files (the
  // test hook replaces the former abort_after_files option, which the CLI read from the
  // environment).
  const auto kill_after_files = [](std::size_t files) {
    spurcast::OutputDirectoryOptions options;
    options.after_step = [files, written = std::size_t{0}](std::size_t,
                                                           const std::string& what) mutable {
      if (what.rfind("wrote ", 0) == 0 && ++written >= files) std::_Exit(137);
    };
    return options;
  };
  const pid_t child = ::fork();
  REQUIRE(child >= 0);
  if (child == 0) {
    try {
      write_output_directory(target, report_b, kill_after_files(2));
    } catch (...) {
    }
    std::_Exit(0);  // not reached when the hook works
  }
  int status = 0;
  REQUIRE(::waitpid(child, &status, 0) == child);
  REQUIRE(WIFEXITED(status));
  CHECK(WEXITSTATUS(status) == 137);

  // The earlier report is whole; the only other things are the abandoned temporary sibling and
  // the lock file (a SIGKILL cannot be cleaned up after; a later run reuses the lock file).
  CHECK(names_in(target) ==
        std::vector<std::string>{".spurcast-output", "scan.csv", "summary.json"});
  CHECK(read_file(target + "/summary.json") == "{\"run\": \"a\"}\n");
  const std::vector<std::string> left = names_in(base);
  REQUIRE(left.size() == 3);
  CHECK(left[0] == "report");
  CHECK(left[1] == "report.spurcast-lock");
  CHECK(left[2].rfind("report.tmp-", 0) == 0);

  // With no earlier report, the killed run leaves no `report` at all.
  fs::remove_all(base);
  fs::create_directory(base);
  const pid_t second = ::fork();
  REQUIRE(second >= 0);
  if (second == 0) {
    try {
      write_output_directory(target, report_b, kill_after_files(1));
    } catch (...) {
    }
    std::_Exit(0);
  }
  REQUIRE(::waitpid(second, &status, 0) == second);
  CHECK(WEXITSTATUS(status) == 137);
  CHECK_FALSE(fs::exists(target));
  fs::remove_all(base);
}

TEST_CASE(
    "issue 14: a folder holding a user's file and a summary.json is refused; the user's files "
    "survive") {
  const std::string base = make_temp_dir();
  const std::string scenario_folder = base + "/project";
  fs::create_directory(scenario_folder);
  std::ofstream(scenario_folder + "/buck.toml") << "title = \"mine\"\n";
  std::ofstream(scenario_folder + "/summary.json") << "{\"mine\": true}\n";
  CHECK_THROWS_WITH_AS(write_output_directory(scenario_folder, report_b),
                       (scenario_folder + " is not empty and was not written by spurcast (no "
                                          ".spurcast-output marker); choose another folder")
                           .c_str(),
                       spurcast::OutputError);
  CHECK(names_in(scenario_folder) == std::vector<std::string>{"buck.toml", "summary.json"});
  CHECK(read_file(scenario_folder + "/buck.toml") == "title = \"mine\"\n");
  CHECK(names_in(base) == std::vector<std::string>{"project"});  // no temporary left
  fs::remove_all(base);
}

TEST_CASE(
    "a report folder that the user added a file to is refused; a subfolder or a listed name that "
    "is a folder too") {
  const std::string base = make_temp_dir();
  const std::string target = base + "/report";
  write_output_directory(target, report_b);
  std::ofstream(target + "/notes.txt") << "my notes";
  CHECK_THROWS_WITH_AS(
      write_output_directory(target, report_a),
      (target +
       " holds files spurcast did not write (notes.txt); move them or choose another folder")
          .c_str(),
      spurcast::OutputError);
  fs::create_directory(target + "/more");
  CHECK_THROWS_WITH_AS(
      write_output_directory(target, report_a),
      (target +
       " holds files spurcast did not write (more and 1 more); move them or choose another folder")
          .c_str(),
      spurcast::OutputError);
  CHECK(read_file(target + "/notes.txt") == "my notes");
  CHECK(read_file(target + "/summary.json") == "{\"run\": \"b\"}\n");
  fs::remove(target + "/notes.txt");
  fs::remove(target + "/more");
  // A listed name replaced by a folder is not what spurcast wrote either.
  fs::remove(target + "/scan.csv");
  fs::create_directory(target + "/scan.csv");
  CHECK_THROWS_WITH_AS(
      write_output_directory(target, report_a),
      (target +
       " holds files spurcast did not write (scan.csv); move them or choose another folder")
          .c_str(),
      spurcast::OutputError);
  fs::remove(target + "/scan.csv");
  // With the user's additions gone the folder is ours again and is replaced.
  write_output_directory(target, report_a);
  CHECK(names_in(target) ==
        std::vector<std::string>{".spurcast-output", "scan.csv", "summary.json"});
  fs::remove_all(base);
}

TEST_CASE("a marker that does not name spurcast, or names a path, makes the folder foreign") {
  const std::string base = make_temp_dir();
  const std::string target = base + "/report";
  fs::create_directory(target);
  std::ofstream(target + "/.spurcast-output") << "file: data.csv\n";  // no tool line
  std::ofstream(target + "/data.csv") << "1,2\n";
  CHECK_THROWS_WITH_AS(write_output_directory(target, report_a),
                       (target + " is not empty and was not written by spurcast (no "
                                 ".spurcast-output marker); choose another folder")
                           .c_str(),
                       spurcast::OutputError);
  std::ofstream(target + "/.spurcast-output") << "tool: spurcast 0.1.0\nfile: ../data.csv\n";
  CHECK_THROWS_WITH_AS(write_output_directory(target, report_a),
                       (target + " is not empty and was not written by spurcast (no "
                                 ".spurcast-output marker); choose another folder")
                           .c_str(),
                       spurcast::OutputError);
  CHECK(read_file(target + "/data.csv") == "1,2\n");
  CHECK_THROWS_WITH_AS(write_output_directory(base + "/r2", {{".spurcast-output", "x"}}),
                       "invalid output file name \".spurcast-output\"", spurcast::OutputError);
  fs::remove_all(base);
}

// --- Single files (issue 14): temporaries that cannot be planted, targets that are not files
// -------

namespace {

/// A fixed sequence of temporary-name suffixes (the test hook), so a test can plant a name first.
std::function<std::string()> suffixes(std::vector<std::string> list) {
  return [list = std::move(list), next = std::size_t{0}]() mutable {
    return list[std::min(next++, list.size() - 1)];
  };
}

/// The message for a file target of `kind`.
std::string not_regular(const std::string& path, const std::string& kind) {
  return "cannot write " + path + ": it is " + kind +
         ", not a regular file; spurcast replaces only regular files";
}

}  // namespace

TEST_CASE(
    "a single file is written, replaces a regular file, and leaves no temporary or lock behind") {
  const std::string base = make_temp_dir();
  spurcast::write_file_atomically(base + "/a.csv", "one\n");
  CHECK(read_file(base + "/a.csv") == "one\n");
  spurcast::write_file_atomically(base + "/a.csv", "two\n");
  CHECK(read_file(base + "/a.csv") == "two\n");
  CHECK(names_in(base) == std::vector<std::string>{"a.csv"});
  CHECK_THROWS_WITH_AS(
      spurcast::write_file_atomically(base + "/no/a.csv", "x"),
      ("cannot write " + base + "/no/a.csv: the folder " + base + "/no does not exist").c_str(),
      spurcast::OutputError);
  fs::remove_all(base);
}

TEST_CASE(
    "a target that is a symbolic link, FIFO, device or folder is refused and left untouched") {
  const std::string base = make_temp_dir();
  std::ofstream(base + "/victim") << "keep";
  fs::create_symlink(base + "/victim", base + "/link.csv");
  CHECK_THROWS_WITH_AS(spurcast::write_file_atomically(base + "/link.csv", "x"),
                       not_regular(base + "/link.csv", "a symbolic link").c_str(),
                       spurcast::OutputError);
  CHECK(read_file(base + "/victim") == "keep");
  CHECK(fs::is_symlink(base + "/link.csv"));

  REQUIRE(::mkfifo((base + "/fifo.csv").c_str(), 0644) == 0);
  CHECK_THROWS_WITH_AS(spurcast::write_file_atomically(base + "/fifo.csv", "x"),
                       not_regular(base + "/fifo.csv", "a FIFO").c_str(), spurcast::OutputError);
  CHECK(fs::is_fifo(base + "/fifo.csv"));

  fs::create_directory(base + "/dir.csv");
  CHECK_THROWS_WITH_AS(spurcast::write_file_atomically(base + "/dir.csv", "x"),
                       not_regular(base + "/dir.csv", "a folder").c_str(), spurcast::OutputError);

  // A character device (1, 3: the null device on Linux, Documentation/admin-guide/devices.txt) can
  // be made only by root; elsewhere the case is skipped with a message.
  if (::mknod((base + "/null.csv").c_str(), S_IFCHR | 0666, makedev(1, 3)) == 0) {
    CHECK_THROWS_WITH_AS(spurcast::write_file_atomically(base + "/null.csv", "x"),
                         not_regular(base + "/null.csv", "a device").c_str(),
                         spurcast::OutputError);
    CHECK(fs::is_character_file(base + "/null.csv"));
  } else {
    MESSAGE("device case skipped: mknod needs root");
  }
  // Nothing else appeared: no temporary, no lock file.
  std::vector<std::string> names = names_in(base);
  names.erase(std::remove(names.begin(), names.end(), "null.csv"), names.end());
  CHECK(names == std::vector<std::string>{"dir.csv", "fifo.csv", "link.csv", "victim"});
  fs::remove_all(base);
}

TEST_CASE("a symbolic link planted at a temporary name is never followed: another name is drawn") {
  const std::string base = make_temp_dir();
  std::ofstream(base + "/victim") << "keep";
  fs::create_directory(base + "/victim-dir");
  // The name the writer will try first is taken by a link to the victim.
  fs::create_symlink(base + "/victim", base + "/out.csv.tmp-planted");
  spurcast::OutputDirectoryOptions options;
  options.next_temporary_suffix = suffixes({"planted", "fresh1"});
  spurcast::write_file_atomically(base + "/out.csv", "new\n", options);
  CHECK(read_file(base + "/out.csv") == "new\n");
  CHECK(read_file(base + "/victim") == "keep");
  CHECK(fs::is_symlink(base + "/out.csv.tmp-planted"));  // not ours: left alone

  // The same for a report folder's temporary, with a link to a folder.
  fs::create_directory_symlink(base + "/victim-dir", base + "/report.tmp-planted");
  options.next_temporary_suffix = suffixes({"planted", "fresh2"});
  write_output_directory(base + "/report", report_a, options);
  CHECK(names_in(base + "/victim-dir").empty());
  CHECK(names_in(base + "/report") ==
        std::vector<std::string>{".spurcast-output", "scan.csv", "summary.json"});

  // The old predictable name FILE.tmp-PID (as before issue 14) is just another foreign name.
  fs::create_symlink(base + "/victim", base + "/pid.csv.tmp-" + std::to_string(::getpid()));
  spurcast::write_file_atomically(base + "/pid.csv", "new\n");
  CHECK(read_file(base + "/victim") == "keep");
  CHECK(read_file(base + "/pid.csv") == "new\n");

  // A link planted at the lock file's name is refused, not followed.
  fs::create_symlink(base + "/victim", base + "/locked.csv.spurcast-lock");
  CHECK_THROWS_WITH_AS(spurcast::write_file_atomically(base + "/locked.csv", "x"),
                       ("cannot write " + base + "/locked.csv: " + base +
                        "/locked.csv.spurcast-lock exists and is not spurcast's lock file")
                           .c_str(),
                       spurcast::OutputError);
  CHECK(read_file(base + "/victim") == "keep");
  CHECK_FALSE(fs::exists(base + "/locked.csv"));
  fs::remove_all(base);
}

// --- Replacing a report: a stop at every step (issue 14)
// -------------------------------------------

namespace {

/// Every file in `folder` with its bytes.
std::map<std::string, std::string> contents_of(const fs::path& folder) {
  std::map<std::string, std::string> files;
  for (const auto& entry : fs::directory_iterator(folder))
    files[entry.path().filename().string()] = read_file(entry.path());
  return files;
}

/// The number of steps of one write of report_b over report_a with `options` (the test hook
/// counts).
std::size_t steps_of_replacement(spurcast::OutputDirectoryOptions options) {
  const std::string base = make_temp_dir();
  write_output_directory(base + "/report", report_a);
  std::size_t steps = 0;
  options.after_step = [&steps](std::size_t step, const std::string&) { steps = step; };
  write_output_directory(base + "/report", report_b, options);
  fs::remove_all(base);
  return steps;
}

/// Runs write_output_directory(target, report_b, options) in a child process whose test hook calls
/// `at_step` at step `k`; returns the child's wait status.
int write_in_child(const std::string& target, spurcast::OutputDirectoryOptions options,
                   std::size_t k, void (*at_step)()) {
  const pid_t child = ::fork();
  REQUIRE(child >= 0);
  if (child == 0) {
    std::signal(SIGTERM,
                SIG_DFL);  // doctest handles SIGTERM in the test process; a CLI run does not
    options.after_step = [k, at_step](std::size_t step, const std::string&) {
      if (step == k) at_step();
    };
    try {
      write_output_directory(target, report_b, options);
    } catch (...) {
      std::_Exit(3);
    }
    std::_Exit(0);
  }
  int status = 0;
  REQUIRE(::waitpid(child, &status, 0) == child);
  return status;
}

void die_like_sigkill() { std::_Exit(137); }
void send_sigterm() { ::kill(::getpid(), SIGTERM); }

}  // namespace

TEST_CASE(
    "a writer stopped after any step leaves the complete old report or the complete new one") {
  for (const bool exchange : {true, false}) {
    CAPTURE(exchange);
    spurcast::OutputDirectoryOptions options;
    options.without_rename_exchange = !exchange;  // the fallback of two renames (header, step 4)
    const std::size_t steps = steps_of_replacement(options);
    REQUIRE(steps >= 9);  // lock, check, create, 3 files + marker, flush, place, remove, done
    const std::string base = make_temp_dir();
    const std::string target = base + "/report";
    write_output_directory(target, report_a);
    const std::map<std::string, std::string> old_report = contents_of(target);
    bool missing_seen = false;
    for (std::size_t k = 1; k <= steps; ++k) {
      CAPTURE(k);
      const int status = write_in_child(target, options, k, die_like_sigkill);
      REQUIRE(WIFEXITED(status));
      CHECK(WEXITSTATUS(status) == 137);
      std::vector<std::string> aside;
      for (const std::string& name : names_in(base)) {
        if (name.rfind("report.old-", 0) == 0) aside.push_back(name);
      }
      if (fs::exists(target)) {
        const std::map<std::string, std::string> now = contents_of(target);
        const bool old_whole = now == old_report;
        const bool new_whole = now.size() == 4 && now.at("report.html") == report_b[0].content &&
                               now.at("scan.csv") == report_b[1].content &&
                               now.at("summary.json") == report_b[2].content;
        CHECK((old_whole || new_whole));
        if (new_whole)
          write_output_directory(target, report_a);  // back to the old one for the next k
      } else {
        // Only the fallback has a moment without a target, and then the old report is whole
        // beside it, the way back.
        CHECK_FALSE(exchange);
        missing_seen = true;
        REQUIRE(aside.size() == 1);
        CHECK(contents_of(base + "/" + aside[0]) == old_report);
        fs::rename(base + "/" + aside[0], target);
      }
      // What a SIGKILL leaves (a temporary, a lock file, an emptied `.old-`) is removed by hand
      // here; the next run must work with a stale lock file, so that one stays.
      for (const std::string& name : names_in(base)) {
        if (name.rfind("report.tmp-", 0) == 0 || name.rfind("report.old-", 0) == 0)
          fs::remove_all(base + "/" + name);
      }
    }
    CHECK(missing_seen == !exchange);  // the fallback's moment between its two renames was hit
    write_output_directory(target, report_b, options);  // a write after all those kills succeeds
    CHECK(names_in(base) == std::vector<std::string>{"report"});
    fs::remove_all(base);
  }
}

TEST_CASE(
    "SIGTERM at any step: the process ends by the signal, no temporary or lock is left, the report "
    "is whole") {
  for (const bool exchange : {true, false}) {
    CAPTURE(exchange);
    spurcast::OutputDirectoryOptions options;
    options.without_rename_exchange = !exchange;
    const std::size_t steps = steps_of_replacement(options);
    const std::string base = make_temp_dir();
    const std::string target = base + "/report";
    write_output_directory(target, report_a);
    const std::map<std::string, std::string> old_report = contents_of(target);
    bool seen_new = false;
    for (std::size_t k = 1; k <= steps; ++k) {
      CAPTURE(k);
      const int status = write_in_child(target, options, k, send_sigterm);
      REQUIRE(WIFSIGNALED(status));
      CHECK(WTERMSIG(status) == SIGTERM);
      CHECK(names_in(base) == std::vector<std::string>{"report"});
      const std::map<std::string, std::string> now = contents_of(target);
      // Before placing, the signal stops the write; from placing on, the write is finished first.
      if (now != old_report) {
        CHECK(now.at("summary.json") == report_b[2].content);
        CHECK(now.size() == 4);
        seen_new = true;
        write_output_directory(target, report_a);
      } else {
        CHECK_FALSE(
            seen_new);  // once a step is past placing, every later step gives the new report
      }
    }
    CHECK(seen_new);
    fs::remove_all(base);
  }
}

TEST_CASE("two writers of one folder at once: the second is refused, the first wins") {
  const std::string base = make_temp_dir();
  const std::string target = base + "/report";
  write_output_directory(target, report_a);
  int locked[2];
  int go[2];
  REQUIRE(::pipe(locked) == 0);
  REQUIRE(::pipe(go) == 0);
  const pid_t first = ::fork();
  REQUIRE(first >= 0);
  if (first == 0) {
    spurcast::OutputDirectoryOptions options;
    options.after_step = [&](std::size_t, const std::string& what) {
      if (what.rfind("locked ", 0) != 0) return;
      char byte = 1;
      (void)!::write(locked[1], &byte, 1);  // tell the parent the lock is held
      (void)!::read(go[0], &byte, 1);       // and wait for it
    };
    try {
      write_output_directory(target, report_b, options);
    } catch (...) {
      std::_Exit(3);
    }
    std::_Exit(0);
  }
  char byte = 0;
  REQUIRE(::read(locked[0], &byte, 1) == 1);
  CHECK_THROWS_WITH_AS(
      write_output_directory(target, report_a),
      ("another spurcast run is writing " + target + " at the same time; nothing was written")
          .c_str(),
      spurcast::OutputError);
  CHECK_THROWS_WITH_AS(
      spurcast::write_file_atomically(target, "x"),
      ("another spurcast run is writing " + target + " at the same time; nothing was written")
          .c_str(),
      spurcast::OutputError);
  REQUIRE(::write(go[1], &byte, 1) == 1);
  int status = 0;
  REQUIRE(::waitpid(first, &status, 0) == first);
  CHECK(WIFEXITED(status));
  CHECK(WEXITSTATUS(status) == 0);
  CHECK(read_file(target + "/summary.json") == report_b[2].content);
  CHECK(names_in(base) == std::vector<std::string>{"report"});
  fs::remove_all(base);
}

// --- Several outputs of one command: together or not at all (issue 14)
// -----------------------------

TEST_CASE(
    "a set whose second target is refused writes nothing and leaves the first target as it was") {
  const std::string base = make_temp_dir();
  std::ofstream(base + "/sweep.csv") << "old csv\n";
  fs::create_directory(base + "/sweep.svg");
  spurcast::OutputSet outputs;
  outputs.add_file(base + "/sweep.csv", "new csv\n");
  outputs.add_file(base + "/sweep.svg", "<svg/>\n");
  CHECK_THROWS_WITH_AS(outputs.commit(), not_regular(base + "/sweep.svg", "a folder").c_str(),
                       spurcast::OutputError);
  CHECK(read_file(base + "/sweep.csv") == "old csv\n");

  spurcast::OutputSet missing_folder;
  missing_folder.add_file(base + "/new.csv", "new csv\n");
  missing_folder.add_file(base + "/no/plot.svg", "<svg/>\n");
  CHECK_THROWS_WITH_AS(
      missing_folder.commit(),
      ("cannot write " + base + "/no/plot.svg: the folder " + base + "/no does not exist").c_str(),
      spurcast::OutputError);
  CHECK(names_in(base) == std::vector<std::string>{"sweep.csv", "sweep.svg"});

  spurcast::OutputSet twice;
  twice.add_file(base + "/same.csv", "a");
  twice.add_file(base + "/same.csv", "b");
  CHECK_THROWS_WITH_AS(twice.commit(), (base + "/same.csv is given twice as an output").c_str(),
                       spurcast::OutputError);
  fs::remove_all(base);
}

TEST_CASE(
    "a set that fails while placing is rolled back: every target as before, no temporary left") {
  for (const bool exchange : {true, false}) {
    CAPTURE(exchange);
    const std::string base = make_temp_dir();
    std::ofstream(base + "/a.csv") << "old a\n";
    std::ofstream(base + "/b.svg") << "old b\n";
    write_output_directory(base + "/report", report_a);
    const std::map<std::string, std::string> old_report = contents_of(base + "/report");
    // Fail after each target is placed in turn (the hook throws, as a failing rename would).
    for (const std::string& failing : {base + "/a.csv", base + "/b.svg", base + "/report"}) {
      CAPTURE(failing);
      spurcast::OutputDirectoryOptions options;
      options.without_rename_exchange = !exchange;
      options.after_step = [&failing](std::size_t, const std::string& what) {
        if (what == "placed " + failing) throw spurcast::OutputError("injected failure");
      };
      spurcast::OutputSet outputs(options);
      outputs.add_file(base + "/a.csv", "new a\n");
      outputs.add_file(base + "/b.svg", "new b\n");
      outputs.add_folder(base + "/report", report_b);
      outputs.add_file(base + "/c.csv", "new c\n");  // a new target: removed again
      CHECK_THROWS_WITH_AS(outputs.commit(), "injected failure", spurcast::OutputError);
      CHECK(read_file(base + "/a.csv") == "old a\n");
      CHECK(read_file(base + "/b.svg") == "old b\n");
      CHECK(contents_of(base + "/report") == old_report);
      CHECK(names_in(base) == std::vector<std::string>{"a.csv", "b.svg", "report"});
    }
    fs::remove_all(base);
  }
}

TEST_CASE("SIGTERM at any step of a two-file set: both files old or both new") {
  spurcast::OutputDirectoryOptions counting;
  std::size_t steps = 0;
  counting.after_step = [&steps](std::size_t step, const std::string&) { steps = step; };
  const std::string base = make_temp_dir();
  const auto write_pair = [&base](const std::string& tag,
                                  const spurcast::OutputDirectoryOptions& options) {
    spurcast::OutputSet outputs(options);
    outputs.add_file(base + "/sweep.csv", tag + " csv\n");
    outputs.add_file(base + "/sweep.svg", tag + " svg\n");
    outputs.commit();
  };
  write_pair("old", {});
  write_pair("old", counting);
  REQUIRE(steps >= 10);
  for (std::size_t k = 1; k <= steps; ++k) {
    CAPTURE(k);
    const pid_t child = ::fork();
    REQUIRE(child >= 0);
    if (child == 0) {
      std::signal(SIGTERM, SIG_DFL);
      spurcast::OutputDirectoryOptions options;
      options.after_step = [k](std::size_t step, const std::string&) {
        if (step == k) ::kill(::getpid(), SIGTERM);
      };
      write_pair("new", options);
      std::_Exit(0);
    }
    int status = 0;
    REQUIRE(::waitpid(child, &status, 0) == child);
    CHECK(WIFSIGNALED(status));
    const std::string csv = read_file(base + "/sweep.csv");
    const std::string svg = read_file(base + "/sweep.svg");
    CHECK(
        ((csv == "old csv\n" && svg == "old svg\n") || (csv == "new csv\n" && svg == "new svg\n")));
    CHECK(names_in(base) == std::vector<std::string>{"sweep.csv", "sweep.svg"});
    write_pair("old", {});
  }
  fs::remove_all(base);
}

TEST_CASE("check_output_folder refuses before any write what write_output_directory would refuse") {
  const std::string base = make_temp_dir();
  spurcast::check_output_folder(base + "/new");  // a new folder is fine
  write_output_directory(base + "/report", report_a);
  spurcast::check_output_folder(base + "/report");  // so is an earlier report
  fs::create_directory(base + "/mine");
  std::ofstream(base + "/mine/buck.toml") << "x";
  CHECK_THROWS_WITH_AS(
      spurcast::check_output_folder(base + "/mine"),
      (base + "/mine is not empty and was not written by spurcast (no .spurcast-output marker); "
              "choose another folder")
          .c_str(),
      spurcast::OutputError);
  CHECK_THROWS_WITH_AS(
      spurcast::check_output_folder(base + "/no/r"),
      ("the folder " + base + "/no (parent of the output folder) does not exist").c_str(),
      spurcast::OutputError);
  CHECK(names_in(base) == std::vector<std::string>{"mine", "report"});
  fs::remove_all(base);
}

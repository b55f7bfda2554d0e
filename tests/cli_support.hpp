#pragma once
// Shared helpers of the end-to-end tests that run the built spurcast executable
// (SPURCAST_EXECUTABLE): file reading, shell quoting, fresh folders and captured runs.
#include <sys/wait.h>
#include <unistd.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

namespace spurcast::test {

namespace fs = std::filesystem;

/// Debian's chromium for the browser tests, "" when it is not installed.
inline std::string find_chromium() {
  for (const char* c : {"/usr/bin/chromium", "/usr/bin/chromium-browser"}) {
    if (::access(c, X_OK) == 0) return c;
  }
  return "";
}

inline std::string read_text(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::stringstream buffer;
  buffer << in.rdbuf();
  return buffer.str();
}

inline void write_text(const fs::path& path, const std::string& text) {
  std::ofstream out(path, std::ios::binary);
  out << text;
}

/// Single-quotes `text` for /bin/sh.
inline std::string shell_quote(const std::string& text) {
  std::string quoted = "'";
  for (const char c : text) {
    if (c == '\'') {
      quoted += "'\\''";
    } else {
      quoted += c;
    }
  }
  return quoted + "'";
}

/// An empty folder under the system temporary folder, named `prefix` + `name`.
inline fs::path fresh_directory(const std::string& prefix, const std::string& name) {
  const fs::path dir = fs::temp_directory_path() / (prefix + name);
  fs::remove_all(dir);
  fs::create_directories(dir);
  return dir;
}

struct RunResult {
  int exit_code = -1;
  std::string out;
  std::string err;
};

/// Runs the CLI in `directory` with `arguments` (each quoted), stdin from /dev/null, stdout and
/// stderr captured through files in `scratch`; `environment` is prepended as VAR=value words.
inline RunResult run_cli(const fs::path& directory, const std::vector<std::string>& arguments, const fs::path& scratch,
                         const std::string& environment = "") {
  std::string command = "cd " + shell_quote(directory.string()) + " && " + environment + " " +
                        shell_quote(SPURCAST_EXECUTABLE);
  for (const std::string& a : arguments) command += " " + shell_quote(a);
  const fs::path out_file = scratch / "stdout.txt";
  const fs::path err_file = scratch / "stderr.txt";
  command += " >" + shell_quote(out_file.string()) + " 2>" + shell_quote(err_file.string()) + " </dev/null";
  const int status = std::system(command.c_str());
  RunResult result;
  result.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  result.out = read_text(out_file);
  result.err = read_text(err_file);
  return result;
}

/// Runs the CLI in `dir` with an unquoted argument string (shell words), output captured in `dir`.
inline RunResult run_in(const fs::path& dir, const std::string& arguments) {
  const std::string command = "cd " + shell_quote(dir.string()) + " && " + shell_quote(SPURCAST_EXECUTABLE) + " " +
                              arguments + " > stdout.txt 2> stderr.txt";
  const int status = std::system(command.c_str());
  RunResult result;
  result.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  result.out = read_text(dir / "stdout.txt");
  result.err = read_text(dir / "stderr.txt");
  return result;
}

}  // namespace spurcast::test

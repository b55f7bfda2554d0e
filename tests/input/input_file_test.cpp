// Opening input files (core/input/input_file): only regular files are read, checked before open()
// and again on the opened descriptor. External facts: the file types of POSIX.1-2017 <sys/stat.h>
// (S_ISREG, S_ISDIR, S_ISFIFO, S_ISCHR); open() of a FIFO for reading blocks until a writer opens
// it unless O_NONBLOCK is given (POSIX.1-2017, open(), "O_NONBLOCK"); /dev/zero and /dev/null are
// character devices (Linux devices.txt, major 1).
#include <doctest/doctest.h>

#include <sys/stat.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <string>

#include "core/input/error.hpp"
#include "core/input/input_file.hpp"

using namespace spurcast;
namespace fs = std::filesystem;

namespace {

fs::path scratch_folder() {
  const fs::path dir = fs::temp_directory_path() / ("spurcast-input-file-" + std::to_string(::getpid()));
  fs::remove_all(dir);
  fs::create_directories(dir);
  return dir;
}

}  // namespace

TEST_CASE("a regular file is read whole") {
  const fs::path dir = scratch_folder();
  const std::string text = "a = 1\n# second line\n";
  std::ofstream(dir / "s.toml", std::ios::binary) << text;
  CHECK(read_input_file((dir / "s.toml").string(), "scenario file", max_toml_file_bytes) == text);
  std::ofstream(dir / "empty.toml", std::ios::binary).flush();
  CHECK(read_input_file((dir / "empty.toml").string(), "scenario file", max_toml_file_bytes).empty());
  fs::remove_all(dir);
}

TEST_CASE("a missing file, a directory, a FIFO and a device are refused with what they are") {
  const fs::path dir = scratch_folder();
  const std::string missing = (dir / "nowhere.toml").string();
  CHECK_THROWS_WITH_AS((void)read_input_file(missing, "scenario file", max_toml_file_bytes),
                       (missing + ": cannot open the scenario file (no such file or directory)").c_str(), Error);
  CHECK_THROWS_WITH_AS((void)read_input_file(dir.string(), "scenario file", max_toml_file_bytes),
                       (dir.string() + ": is a directory, expected a scenario file").c_str(), Error);
  // A FIFO with no writer: open() would block forever; the check comes first, so this returns.
  const std::string fifo = (dir / "pipe").string();
  REQUIRE(::mkfifo(fifo.c_str(), 0600) == 0);
  CHECK_THROWS_WITH_AS((void)read_input_file(fifo, "capture file", max_csv_file_bytes),
                       (fifo + ": is a named pipe, expected a capture file").c_str(), Error);
  // /dev/zero never ends: refused before any byte is read.
  CHECK_THROWS_WITH_AS((void)read_input_file("/dev/zero", "trace file", max_csv_file_bytes),
                       "/dev/zero: is a character device, expected a trace file", Error);
  // A symbolic link is followed to what it names.
  fs::create_symlink("/dev/zero", dir / "link.csv");
  CHECK_THROWS_WITH_AS((void)read_input_file((dir / "link.csv").string(), "trace file", max_csv_file_bytes),
                       ((dir / "link.csv").string() + ": is a character device, expected a trace file").c_str(), Error);
  fs::remove_all(dir);
}

TEST_CASE("a file larger than its bound is refused before it is read") {
  const fs::path dir = scratch_folder();
  const fs::path big = dir / "big.toml";
  std::ofstream(big, std::ios::binary).flush();
  // A sparse file one byte over the bound: refused from its size, no 16 MiB buffer filled.
  fs::resize_file(big, max_toml_file_bytes + 1);
  CHECK_THROWS_WITH_AS((void)read_input_file(big.string(), "scenario file", max_toml_file_bytes),
                       (big.string() + ": is 16777217 bytes, more than the 16777216 bytes a scenario file may have").c_str(),
                       Error);
  fs::resize_file(big, 1000);
  CHECK(read_input_file(big.string(), "scenario file", 1000).size() == 1000);
  CHECK_THROWS_WITH_AS((void)read_input_file(big.string(), "scenario file", 999),
                       (big.string() + ": is 1000 bytes, more than the 999 bytes a scenario file may have").c_str(), Error);
  fs::remove_all(dir);
}

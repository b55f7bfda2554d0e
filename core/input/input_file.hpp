#pragma once
/// Opening the user's input files for reading, shared by every loader (scenario, limit files,
/// band plans, captures, traces, correction tables). Only a regular file is read: a directory, a
/// named pipe (FIFO), a device or a socket is refused before it is opened, since a FIFO with no
/// writer blocks open() forever and /dev/zero never ends (issue 14). The file is then opened with
/// O_NONBLOCK, so that a path swapped for a FIFO between the check and the open cannot block, and
/// the opened descriptor is checked again.
///
/// Example:
///   const std::string text = read_input_file("s.toml", "scenario file", max_toml_file_bytes);
///   // "s.toml: is a directory, expected a scenario file"
#include <cstddef>
#include <string>

namespace spurcast {

/// Largest TOML input (scenario, limit file, band plan): 16 MiB. The shipped files are a few kB;
/// the bound keeps a mistaken path (a log, a disk image) from being read whole. Judgement.
inline constexpr std::size_t max_toml_file_bytes = std::size_t{16} << 20;
/// Largest CSV read whole (analyser trace, correction table, scan CSV): 256 MiB, about 10 million
/// rows; an analyser export has 1001 to 100 001 points (common practice). Judgement.
inline constexpr std::size_t max_csv_file_bytes = std::size_t{256} << 20;

/// An open regular file (read-only, close-on-exec); closes it when destroyed.
class InputFile {
 public:
  /// Throws Error "PATH: cannot open the WHAT (reason)" or "PATH: is a named pipe, expected a
  /// WHAT" (directory, named pipe, character device, block device, socket).
  InputFile(const std::string& path, const std::string& what);
  InputFile(const InputFile&) = delete;
  InputFile& operator=(const InputFile&) = delete;
  ~InputFile();

  [[nodiscard]] int descriptor() const noexcept { return fd_; }
  /// Size when opened [bytes].
  [[nodiscard]] std::size_t size_bytes() const noexcept { return size_; }
  /// The whole file; Error "PATH: is N bytes, more than the M bytes a WHAT may have" above max_bytes.
  [[nodiscard]] std::string read_all(std::size_t max_bytes) const;

 private:
  std::string path_;
  std::string what_;
  int fd_ = -1;
  std::size_t size_ = 0;
};

/// InputFile(path, what).read_all(max_bytes).
[[nodiscard]] std::string read_input_file(const std::string& path, const std::string& what, std::size_t max_bytes);

}  // namespace spurcast

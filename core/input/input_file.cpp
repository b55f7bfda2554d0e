#include "core/input/input_file.hpp"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cctype>
#include <cerrno>
#include <cstring>

#include "core/input/error.hpp"

namespace spurcast {

namespace {

std::string reason_of(int error_number) {
  std::string reason = std::strerror(error_number);
  if (!reason.empty()) reason[0] = static_cast<char>(std::tolower(static_cast<unsigned char>(reason[0])));
  return reason;
}

/// "a directory", "a named pipe", ... for a file type that is not a regular file.
std::string kind_of(mode_t mode) {
  if (S_ISDIR(mode)) return "a directory";
  if (S_ISFIFO(mode)) return "a named pipe";
  if (S_ISCHR(mode)) return "a character device";
  if (S_ISBLK(mode)) return "a block device";
  if (S_ISSOCK(mode)) return "a socket";
  return "not a regular file";
}

[[noreturn]] void refuse(const std::string& path, const std::string& what, mode_t mode) {
  const std::string kind = kind_of(mode);
  throw Error(SourcePosition{path, 0, 0},
              (kind.rfind("a ", 0) == 0 ? "is " : "") + kind + ", expected a " + what);
}

}  // namespace

InputFile::InputFile(const std::string& path, const std::string& what) : path_(path), what_(what) {
  // Checked before open(): open() of a FIFO with no writer blocks until one appears.
  struct stat info {};
  if (::stat(path.c_str(), &info) != 0) {
    throw Error(SourcePosition{path, 0, 0}, "cannot open the " + what + " (" + reason_of(errno) + ")");
  }
  if (!S_ISREG(info.st_mode)) refuse(path, what, info.st_mode);
  // O_NONBLOCK: the path may have been replaced by a FIFO since; for a regular file it changes
  // nothing. O_NOCTTY: a terminal device must not become the controlling terminal.
  fd_ = ::open(path.c_str(), O_RDONLY | O_CLOEXEC | O_NONBLOCK | O_NOCTTY);
  if (fd_ < 0) throw Error(SourcePosition{path, 0, 0}, "cannot open the " + what + " (" + reason_of(errno) + ")");
  if (::fstat(fd_, &info) != 0 || !S_ISREG(info.st_mode)) {
    const mode_t mode = info.st_mode;
    ::close(fd_);
    fd_ = -1;
    refuse(path, what, mode);
  }
  size_ = static_cast<std::size_t>(info.st_size);
}

InputFile::~InputFile() {
  if (fd_ >= 0) ::close(fd_);
}

std::string InputFile::read_all(std::size_t max_bytes) const {
  const auto too_large = [&](std::size_t size) {
    return Error(SourcePosition{path_, 0, 0}, "is " + std::to_string(size) + " bytes, more than the " +
                                                  std::to_string(max_bytes) + " bytes a " + what_ + " may have");
  };
  if (size_ > max_bytes) throw too_large(size_);
  std::string text(size_, '\0');
  std::size_t filled = 0;
  while (true) {
    char probe = 0;
    const bool full = filled == text.size();  // then only look whether the file grew since fstat()
    const ssize_t got = full ? ::pread(fd_, &probe, 1, static_cast<off_t>(filled))
                             : ::pread(fd_, text.data() + filled, text.size() - filled, static_cast<off_t>(filled));
    if (got < 0) {
      if (errno == EINTR) continue;
      throw Error(SourcePosition{path_, 0, 0}, "cannot read the " + what_ + " (" + reason_of(errno) + ")");
    }
    if (got == 0) break;
    if (full) {
      if (filled + 1 > max_bytes) throw too_large(filled + 1);
      text.resize(std::min(max_bytes, std::max<std::size_t>(2 * text.size(), 4096)));
      text[filled] = probe;
    }
    filled += static_cast<std::size_t>(got);
  }
  text.resize(filled);
  return text;
}

std::string read_input_file(const std::string& path, const std::string& what, std::size_t max_bytes) {
  return InputFile(path, what).read_all(max_bytes);
}

}  // namespace spurcast

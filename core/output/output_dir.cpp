#include "core/output/output_dir.hpp"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <set>
#include <system_error>

#include "core/input/error.hpp"

namespace spurcast {

namespace fs = std::filesystem;

namespace {

std::string system_message(int error_number) { return std::strerror(error_number); }

/// Creates a fresh folder `base` + suffix + six random characters (mkdtemp) and returns its path.
std::string make_unique_directory(const std::string& base, const std::string& suffix) {
  std::string pattern = base + suffix + "XXXXXX";
  if (::mkdtemp(pattern.data()) == nullptr) {
    throw Error("cannot create the folder " + base + suffix + "...: " + system_message(errno));
  }
  return pattern;
}

/// Finds a free name `base` + suffix + six random characters without creating it: mkdtemp makes
/// the name unique, then the empty folder is removed so rename() can take the name.
std::string unique_free_name(const std::string& base, const std::string& suffix) {
  const std::string name = make_unique_directory(base, suffix);
  ::rmdir(name.c_str());
  return name;
}

void fsync_path(const std::string& path, int flags) {
  const int fd = ::open(path.c_str(), flags);
  if (fd < 0) return;  // flushing is best effort for folders
  (void)::fsync(fd);
  ::close(fd);
}

/// Writes the whole of `content` to `path` (new file) and flushes it to the disk.
void write_file(const std::string& path, const std::string& content) {
  const int fd = ::open(path.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0644);
  if (fd < 0) throw Error("cannot create " + path + ": " + system_message(errno));
  const char* data = content.data();
  std::size_t left = content.size();
  while (left > 0) {
    const ssize_t written = ::write(fd, data, left);
    if (written < 0) {
      if (errno == EINTR) continue;
      const int saved = errno;
      ::close(fd);
      throw Error("cannot write " + path + ": " + system_message(saved));
    }
    data += written;
    left -= static_cast<std::size_t>(written);
  }
  if (::fsync(fd) != 0 || ::close(fd) != 0) {
    throw Error("cannot write " + path + ": " + system_message(errno));
  }
}

void check_names(const std::vector<OutputFile>& files) {
  std::set<std::string> seen;
  for (const OutputFile& file : files) {
    if (file.name.empty() || file.name == "." || file.name == ".." ||
        file.name.find('/') != std::string::npos || file.name.find('\0') != std::string::npos) {
      throw Error("invalid output file name \"" + file.name + "\"");
    }
    if (!seen.insert(file.name).second) throw Error("output file \"" + file.name + "\" listed twice");
  }
}

void remove_quietly(const std::string& path) {
  std::error_code ignored;
  fs::remove_all(path, ignored);
}

}  // namespace

void write_output_directory(const std::string& directory, const std::vector<OutputFile>& files,
                            const OutputDirectoryOptions& options) {
  check_names(files);
  // Strip trailing slashes so "out/" names the folder "out" and its siblings sit beside it.
  std::string target = directory;
  while (target.size() > 1 && target.back() == '/') target.pop_back();
  if (target.empty() || target == "." || target == ".." || target == "/") {
    throw Error("invalid output folder \"" + directory + "\"");
  }
  const fs::path target_path(target);
  const fs::path parent = target_path.has_parent_path() ? target_path.parent_path() : fs::path(".");
  std::error_code code;
  if (!fs::is_directory(parent, code)) {
    throw Error("the folder " + parent.string() + " (parent of the output folder) does not exist");
  }

  const fs::file_status status = fs::symlink_status(target_path, code);
  const bool exists = fs::exists(status);
  if (exists) {
    if (!fs::is_directory(status)) throw Error(target + " exists and is not a folder");
    const bool empty = fs::is_empty(target_path, code);
    if (!empty && !fs::exists(target_path / options.marker_file, code)) {
      throw Error(target + " exists and is not a spurcast output folder (no " + options.marker_file +
                  "); choose another folder");
    }
  }

  const std::string temporary = make_unique_directory(target, ".tmp-");
  ::chmod(temporary.c_str(), 0755);  // mkdtemp makes it 0700; an output folder is an ordinary folder
  try {
    std::size_t written = 0;
    for (const OutputFile& file : files) {
      write_file(temporary + "/" + file.name, file.content);
      ++written;
      if (options.abort_after_files && written >= *options.abort_after_files) {
        std::_Exit(137);  // test hook: die like a killed process, no clean-up
      }
    }
    fsync_path(temporary, O_RDONLY | O_DIRECTORY);

    if (!exists) {
      if (::rename(temporary.c_str(), target.c_str()) != 0) {
        throw Error("cannot rename " + temporary + " to " + target + ": " + system_message(errno));
      }
    } else {
      // rename() cannot replace a non-empty folder: move the old one away first. Between the two
      // renames DIR is briefly absent, never half-written.
      const std::string old = unique_free_name(target, ".old-");
      if (::rename(target.c_str(), old.c_str()) != 0) {
        throw Error("cannot rename " + target + " to " + old + ": " + system_message(errno));
      }
      if (::rename(temporary.c_str(), target.c_str()) != 0) {
        const int saved = errno;
        (void)::rename(old.c_str(), target.c_str());  // put the old report back
        throw Error("cannot rename " + temporary + " to " + target + ": " + system_message(saved));
      }
      remove_quietly(old);
    }
    fsync_path(parent.string(), O_RDONLY | O_DIRECTORY);
  } catch (...) {
    remove_quietly(temporary);
    throw;
  }
}

void write_file_atomically(const std::string& path, const std::string& content) {
  const std::string temporary = path + ".tmp-" + std::to_string(::getpid());
  {
    std::ofstream out(temporary, std::ios::binary | std::ios::trunc);
    if (!out) throw Error(SourcePosition{path, 0, 0}, "cannot write file");
    out << content;
    out.close();
    if (!out) {
      std::filesystem::remove(temporary);
      throw Error(SourcePosition{path, 0, 0}, "cannot write file");
    }
  }
  std::error_code error;
  std::filesystem::rename(temporary, path, error);
  if (error) {
    std::filesystem::remove(temporary);
    throw Error(SourcePosition{path, 0, 0}, "cannot write file: " + error.message());
  }
}

}  // namespace spurcast

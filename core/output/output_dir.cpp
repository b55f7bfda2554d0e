#include "core/output/output_dir.hpp"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <optional>
#include <set>
#include <sstream>
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
    throw OutputError("cannot create the folder " + base + suffix + "...: " + system_message(errno));
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
  if (fd < 0) throw OutputError("cannot create " + path + ": " + system_message(errno));
  const char* data = content.data();
  std::size_t left = content.size();
  while (left > 0) {
    const ssize_t written = ::write(fd, data, left);
    if (written < 0) {
      if (errno == EINTR) continue;
      const int saved = errno;
      ::close(fd);
      throw OutputError("cannot write " + path + ": " + system_message(saved));
    }
    data += written;
    left -= static_cast<std::size_t>(written);
  }
  if (::fsync(fd) != 0 || ::close(fd) != 0) {
    throw OutputError("cannot write " + path + ": " + system_message(errno));
  }
}

void check_names(const std::vector<OutputFile>& files) {
  std::set<std::string> seen;
  for (const OutputFile& file : files) {
    if (file.name.empty() || file.name == "." || file.name == ".." ||
        file.name.find('/') != std::string::npos || file.name.find('\0') != std::string::npos) {
      throw OutputError("invalid output file name \"" + file.name + "\"");
    }
    if (!seen.insert(file.name).second) throw OutputError("output file \"" + file.name + "\" listed twice");
    if (file.name == output_marker_name) throw OutputError("invalid output file name \"" + file.name + "\"");
  }
}

void remove_quietly(const std::string& path) {
  std::error_code ignored;
  fs::remove_all(path, ignored);
}

constexpr const char* marker_tool_prefix = "tool: spurcast ";
constexpr const char* marker_file_prefix = "file: ";

/// The files listed by the marker of `folder`, or nothing when it has no marker or one we cannot
/// read (a marker must name the tool on a `tool:` line; every other line is a comment or a file).
std::optional<std::set<std::string>> read_marker(const fs::path& folder) {
  const fs::path marker = folder / output_marker_name;
  std::error_code code;
  if (!fs::is_regular_file(fs::symlink_status(marker, code))) return std::nullopt;
  std::ifstream in(marker, std::ios::binary);
  if (!in) return std::nullopt;
  std::set<std::string> names;
  bool tool_named = false;
  for (std::string line; std::getline(in, line);) {
    if (line.empty() || line[0] == '#') continue;
    if (line.rfind(marker_tool_prefix, 0) == 0) {
      tool_named = true;
    } else if (line.rfind(marker_file_prefix, 0) == 0) {
      const std::string name = line.substr(std::string(marker_file_prefix).size());
      if (name.empty() || name == "." || name == ".." || name.find('/') != std::string::npos) return std::nullopt;
      names.insert(name);
    } else {
      return std::nullopt;
    }
  }
  if (!tool_named) return std::nullopt;
  return names;
}

/// Checks that the existing folder `target` may be replaced: empty, or marked as ours and holding
/// nothing but regular files its marker lists. Returns the names to remove with it.
std::set<std::string> check_replaceable(const std::string& target) {
  std::vector<std::string> present;
  std::error_code code;
  for (fs::directory_iterator it(target, code), end; !code && it != end; it.increment(code)) {
    present.push_back(it->path().filename().string());
  }
  if (code) throw OutputError("cannot read the folder " + target + ": " + code.message());
  if (present.empty()) return {};
  const std::optional<std::set<std::string>> listed = read_marker(target);
  if (!listed) {
    throw OutputError(target + " is not empty and was not written by spurcast (no " + output_marker_name +
                      " marker); choose another folder");
  }
  std::vector<std::string> foreign;
  for (const std::string& name : present) {
    if (name == output_marker_name) continue;
    const bool regular = fs::is_regular_file(fs::symlink_status(fs::path(target) / name, code));
    if (!listed->count(name) || !regular) foreign.push_back(name);
  }
  if (!foreign.empty()) {
    std::sort(foreign.begin(), foreign.end());
    std::string names = foreign.front();
    if (foreign.size() > 1) names += " and " + std::to_string(foreign.size() - 1) + " more";
    throw OutputError(target + " holds files spurcast did not write (" + names +
                      "); move them or choose another folder");
  }
  std::set<std::string> ours(present.begin(), present.end());
  return ours;
}

/// Removes the earlier report moved aside to `folder`: only the files that check_replaceable
/// found ours, then the folder itself, which fails (and keeps it) if anything else appeared.
void remove_old_report(const std::string& folder, const std::set<std::string>& names) {
  for (const std::string& name : names) (void)::unlink((folder + "/" + name).c_str());
  (void)::rmdir(folder.c_str());
}

}  // namespace

std::string output_marker_text(const std::vector<std::string>& names) {
  std::string text =
      "# written by spurcast, which replaces this folder only while it holds nothing but the files below\n";
  text += marker_tool_prefix;
  text += SPURCAST_VERSION "\n";
  for (const std::string& name : names) text += marker_file_prefix + name + "\n";
  return text;
}

void write_output_directory(const std::string& directory, const std::vector<OutputFile>& files,
                            const OutputDirectoryOptions& options) {
  check_names(files);
  // Strip trailing slashes so "out/" names the folder "out" and its siblings sit beside it.
  std::string target = directory;
  while (target.size() > 1 && target.back() == '/') target.pop_back();
  if (target.empty() || target == "." || target == ".." || target == "/") {
    throw OutputError("invalid output folder \"" + directory + "\"");
  }
  const fs::path target_path(target);
  const fs::path parent = target_path.has_parent_path() ? target_path.parent_path() : fs::path(".");
  std::error_code code;
  if (!fs::is_directory(parent, code)) {
    throw OutputError("the folder " + parent.string() + " (parent of the output folder) does not exist");
  }

  const fs::file_status status = fs::symlink_status(target_path, code);
  const bool exists = fs::exists(status);
  std::set<std::string> old_names;
  if (exists) {
    if (!fs::is_directory(status)) throw OutputError(target + " exists and is not a folder");
    old_names = check_replaceable(target);
  }
  std::vector<std::string> names;
  for (const OutputFile& file : files) names.push_back(file.name);

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
    write_file(temporary + "/" + output_marker_name, output_marker_text(names));
    fsync_path(temporary, O_RDONLY | O_DIRECTORY);

    if (!exists) {
      if (::rename(temporary.c_str(), target.c_str()) != 0) {
        throw OutputError("cannot rename " + temporary + " to " + target + ": " + system_message(errno));
      }
    } else {
      // rename() cannot replace a non-empty folder: move the old one away first. Between the two
      // renames DIR is briefly absent, never half-written.
      const std::string old = unique_free_name(target, ".old-");
      if (::rename(target.c_str(), old.c_str()) != 0) {
        throw OutputError("cannot rename " + target + " to " + old + ": " + system_message(errno));
      }
      if (::rename(temporary.c_str(), target.c_str()) != 0) {
        const int saved = errno;
        (void)::rename(old.c_str(), target.c_str());  // put the old report back
        throw OutputError("cannot rename " + temporary + " to " + target + ": " + system_message(saved));
      }
      remove_old_report(old, old_names);
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
    if (!out) throw OutputError(SourcePosition{path, 0, 0}, "cannot write file");
    out << content;
    out.close();
    if (!out) {
      std::filesystem::remove(temporary);
      throw OutputError(SourcePosition{path, 0, 0}, "cannot write file");
    }
  }
  std::error_code error;
  std::filesystem::rename(temporary, path, error);
  if (error) {
    std::filesystem::remove(temporary);
    throw OutputError(SourcePosition{path, 0, 0}, "cannot write file: " + error.message());
  }
}

}  // namespace spurcast

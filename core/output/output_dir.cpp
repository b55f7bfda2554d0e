#include "core/output/output_dir.hpp"

#include <dirent.h>
#include <fcntl.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <sys/syscall.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <csignal>
#include <cstring>
#include <fstream>
#include <mutex>
#include <optional>
#include <random>
#include <set>
#include <sstream>

namespace spurcast {

namespace {

// renameat2(2) flags (linux/fs.h); defined here when the C library's headers lack them.
#ifndef RENAME_NOREPLACE
constexpr unsigned int RENAME_NOREPLACE = 1U << 0;
#endif
#ifndef RENAME_EXCHANGE
constexpr unsigned int RENAME_EXCHANGE = 1U << 1;
#endif

std::string system_message(int error_number) { return std::strerror(error_number); }

/// renameat2 through the system call itself: glibc gained a wrapper only in 2.28, and the call is
/// all we need. Returns 0 or -1 with errno set (EINVAL or ENOSYS where the filesystem or kernel
/// lacks it, see the header's step 4).
int rename_with_flags(const std::string& from, const std::string& to, unsigned int flags,
                      bool refuse) {
  if (refuse) {
    errno = EINVAL;
    return -1;
  }
  return static_cast<int>(
      ::syscall(SYS_renameat2, AT_FDCWD, from.c_str(), AT_FDCWD, to.c_str(), flags));
}

bool unsupported(int error_number) { return error_number == EINVAL || error_number == ENOSYS; }

// --- Signals
// -------------------------------------------------------------------------------------- SIGINT,
// SIGTERM and SIGHUP during a write are deferred, not handled in place: the handler only records
// the signal (a store to a volatile sig_atomic_t is async-signal-safe), and the writer checks it at
// safe points between steps, removes its temporaries with ordinary code, restores the previous
// dispositions and raises the signal again, so the process still ends by that signal. Clean-up
// inside the handler would have to walk the temporaries' names from static storage while the writer
// may be creating them, and could not tell a half-made folder from a finished one. A handler
// (process-wide) rather than a blocked mask (per thread): the signal may be delivered to any thread
// of the process. This static state is the one exception here to "no globals": a signal handler can
// reach nothing else.
volatile std::sig_atomic_t pending_signal = 0;
std::mutex deferral_mutex;
int deferral_depth = 0;
constexpr int deferred_signals[] = {SIGINT, SIGTERM, SIGHUP};
struct sigaction previous_actions[3];
bool installed[3] = {false, false, false};

extern "C" void record_signal(int signal_number) { pending_signal = signal_number; }

/// Defers the signals above for its lifetime (nested deferrals share one installation).
class SignalDeferral {
 public:
  SignalDeferral() {
    const std::lock_guard<std::mutex> lock(deferral_mutex);
    if (deferral_depth++ > 0) return;
    pending_signal = 0;
    for (int i = 0; i < 3; ++i) {
      struct sigaction current {};
      installed[i] = false;
      if (::sigaction(deferred_signals[i], nullptr, &current) != 0) continue;
      if (current.sa_handler == SIG_IGN) continue;  // an ignored signal stays ignored (nohup, `&`)
      struct sigaction action {};
      action.sa_handler = record_signal;
      sigemptyset(&action.sa_mask);
      action.sa_flags = SA_RESTART;
      installed[i] = ::sigaction(deferred_signals[i], &action, &previous_actions[i]) == 0;
    }
  }
  ~SignalDeferral() {
    int signal_number = 0;
    {
      const std::lock_guard<std::mutex> lock(deferral_mutex);
      if (--deferral_depth > 0) return;
      for (int i = 0; i < 3; ++i) {
        if (installed[i]) ::sigaction(deferred_signals[i], &previous_actions[i], nullptr);
        installed[i] = false;
      }
      signal_number = pending_signal;
      pending_signal = 0;
    }
    // With the previous disposition back (by default: terminate), the held signal takes effect now.
    if (signal_number != 0) ::raise(signal_number);
  }
  SignalDeferral(const SignalDeferral&) = delete;
  SignalDeferral& operator=(const SignalDeferral&) = delete;

  /// The signal received since the deferral began, or 0.
  [[nodiscard]] static int pending() { return pending_signal; }
};

// --- Names and files
// ------------------------------------------------------------------------------

std::string random_suffix() {
  static constexpr char alphabet[] =
      "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789";
  std::random_device device;
  std::uniform_int_distribution<int> pick(0, static_cast<int>(sizeof(alphabet)) - 2);
  std::string suffix;
  for (int i = 0; i < 6; ++i) suffix += alphabet[pick(device)];
  return suffix;
}

/// The target path without trailing slashes, its parent folder and its last component.
struct TargetPath {
  std::string path;
  std::string parent;
};

TargetPath split_target(const std::string& given, bool folder) {
  std::string path = given;
  while (path.size() > 1 && path.back() == '/') path.pop_back();
  const std::size_t slash = path.rfind('/');
  const std::string name = slash == std::string::npos ? path : path.substr(slash + 1);
  if (path.empty() || name.empty() || name == "." || name == ".." || path == "/") {
    throw OutputError(std::string(folder ? "invalid output folder" : "invalid output file") +
                      " \"" + given + "\"");
  }
  if (!folder && given.back() == '/') throw OutputError("invalid output file \"" + given + "\"");
  std::string parent =
      slash == std::string::npos ? "." : (slash == 0 ? "/" : path.substr(0, slash));
  return {path, parent};
}

/// What lstat(2) says a path is, in words, for messages.
std::string kind_of(mode_t mode) {
  if (S_ISLNK(mode)) return "a symbolic link";
  if (S_ISDIR(mode)) return "a folder";
  if (S_ISCHR(mode) || S_ISBLK(mode)) return "a device";
  if (S_ISFIFO(mode)) return "a FIFO";
  if (S_ISSOCK(mode)) return "a socket";
  return "not a regular file";
}

/// Writes the whole of `content` to the open file `fd` and flushes it to the disk; closes `fd`.
void write_and_close(int fd, const std::string& content, const std::string& shown) {
  const char* data = content.data();
  std::size_t left = content.size();
  while (left > 0) {
    const ssize_t written = ::write(fd, data, left);
    if (written < 0) {
      if (errno == EINTR) continue;
      const int saved = errno;
      ::close(fd);
      throw OutputError("cannot write " + shown + ": " + system_message(saved));
    }
    data += written;
    left -= static_cast<std::size_t>(written);
  }
  if (::fsync(fd) != 0) {
    const int saved = errno;
    ::close(fd);
    throw OutputError("cannot write " + shown + ": " + system_message(saved));
  }
  if (::close(fd) != 0) throw OutputError("cannot write " + shown + ": " + system_message(errno));
}

void fsync_folder(const std::string& path) {
  const int fd = ::open(path.c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC);
  if (fd < 0) return;  // flushing a folder is best effort
  (void)::fsync(fd);
  ::close(fd);
}

void check_names(const std::vector<OutputFile>& files) {
  std::set<std::string> seen;
  for (const OutputFile& file : files) {
    if (file.name.empty() || file.name == "." || file.name == ".." ||
        file.name.find('/') != std::string::npos || file.name.find('\0') != std::string::npos ||
        file.name == output_marker_name) {
      throw OutputError("invalid output file name \"" + file.name + "\"");
    }
    if (!seen.insert(file.name).second)
      throw OutputError("output file \"" + file.name + "\" listed twice");
  }
}

constexpr const char* marker_tool_prefix = "tool: spurcast ";
constexpr const char* marker_file_prefix = "file: ";

/// The files listed by the marker of `folder`, or nothing when it has no marker or one we cannot
/// read (a marker must name the tool on a `tool:` line; every other line is a comment or a file).
std::optional<std::set<std::string>> read_marker(const std::string& folder) {
  const std::string marker = folder + "/" + output_marker_name;
  struct stat info {};
  if (::lstat(marker.c_str(), &info) != 0 || !S_ISREG(info.st_mode)) return std::nullopt;
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
      if (name.empty() || name == "." || name == ".." || name.find('/') != std::string::npos)
        return std::nullopt;
      names.insert(name);
    } else {
      return std::nullopt;
    }
  }
  if (!tool_named) return std::nullopt;
  return names;
}

/// Names in `folder` (not . and ..).
std::vector<std::string> entries_of(const std::string& folder) {
  std::vector<std::string> names;
  const int fd = ::open(folder.c_str(), O_RDONLY | O_DIRECTORY | O_NOFOLLOW | O_CLOEXEC);
  if (fd < 0) throw OutputError("cannot read the folder " + folder + ": " + system_message(errno));
  DIR* dir = ::fdopendir(fd);
  if (dir == nullptr) {
    const int saved = errno;
    ::close(fd);
    throw OutputError("cannot read the folder " + folder + ": " + system_message(saved));
  }
  while (const dirent* entry = ::readdir(dir)) {
    const std::string name = entry->d_name;
    if (name != "." && name != "..") names.push_back(name);
  }
  ::closedir(dir);
  return names;
}

/// Checks that the existing folder `target` may be replaced: empty, or marked as ours and holding
/// nothing but regular files its marker lists. Returns the names to remove with it.
std::set<std::string> check_replaceable(const std::string& target) {
  const std::vector<std::string> present = entries_of(target);
  if (present.empty()) return {};
  const std::optional<std::set<std::string>> listed = read_marker(target);
  if (!listed) {
    throw OutputError(target + " is not empty and was not written by spurcast (no " +
                      output_marker_name + " marker); choose another folder");
  }
  std::vector<std::string> foreign;
  for (const std::string& name : present) {
    if (name == output_marker_name) continue;
    struct stat info {};
    const bool regular =
        ::lstat((target + "/" + name).c_str(), &info) == 0 && S_ISREG(info.st_mode);
    if (!listed->count(name) || !regular) foreign.push_back(name);
  }
  if (!foreign.empty()) {
    std::sort(foreign.begin(), foreign.end());
    std::string names = foreign.front();
    if (foreign.size() > 1) names += " and " + std::to_string(foreign.size() - 1) + " more";
    throw OutputError(target + " holds files spurcast did not write (" + names +
                      "); move them or choose another folder");
  }
  return {present.begin(), present.end()};
}

/// Removes the folder `folder` holding only `names` (files we wrote or checked as ours): the files
/// one by one, then the folder, which rmdir(2) keeps if anything else appeared in it meanwhile.
void remove_our_folder(const std::string& folder, const std::set<std::string>& names) {
  for (const std::string& name : names) (void)::unlink((folder + "/" + name).c_str());
  (void)::rmdir(folder.c_str());
}

// --- One commit
// -----------------------------------------------------------------------------------

struct Work {
  bool folder = false;
  TargetPath where;
  const std::vector<OutputFile>* files = nullptr;
  // Step 1.
  std::string lock_path;
  int lock_fd = -1;
  // Step 2.
  bool existed = false;
  dev_t device = 0;
  ino_t inode = 0;
  std::set<std::string> old_names;  // an existing folder's files, removed with it
  // Step 3.
  std::string temporary;               // the staged output, later the swapped-out old one
  std::set<std::string> staged_names;  // files written into a temporary folder
  // Step 4.
  enum class Placed { no, exchanged, created, moved_aside } placed = Placed::no;
  std::string aside;  // the fallback's TARGET.old-XXXXXX
};

class Commit {
 public:
  Commit(const OutputDirectoryOptions& options, std::vector<Work>& work)
      : options_(options), work_(work) {}

  void run() {
    for (Work& w : work_) check_parent(w);
    try {
      for (Work& w : work_) lock(w);
      for (Work& w : work_) inspect(w);
      for (Work& w : work_) stage(w);
      placing_ = true;
      for (Work& w : work_) place(w);
    } catch (...) {
      roll_back();
      unlock_all();
      throw;
    }
    try {
      for (Work& w : work_) remove_old(w);
      for (Work& w : work_) fsync_folder(w.where.parent);
    } catch (...) {  // only a test hook throws here: every output is already in place
      unlock_all();
      throw;
    }
    unlock_all();
    step("done");
  }

 private:
  const OutputDirectoryOptions& options_;
  std::vector<Work>& work_;
  std::size_t steps_ = 0;
  bool placing_ = false;

  /// A safe point: the test hook, then (before placing) a held signal stops the write.
  void step(const std::string& what) {
    ++steps_;
    if (options_.after_step) options_.after_step(steps_, what);
    if (!placing_ && SignalDeferral::pending() != 0) {
      throw OutputError("interrupted by signal " + std::to_string(SignalDeferral::pending()) +
                        "; nothing was written");
    }
  }

  std::string suffix() const {
    return options_.next_temporary_suffix ? options_.next_temporary_suffix() : random_suffix();
  }

  void lock(Work& w) {
    w.lock_path = w.where.path + ".spurcast-lock";
    const std::string conflict = "another spurcast run is writing " + w.where.path +
                                 " at the same time; nothing was written";
    // The lock file may be replaced or removed by the run that held it between our open and our
    // flock: a lock counts only while the name still leads to the file we locked.
    const std::string not_a_lock = "cannot write " + w.where.path + ": " + w.lock_path +
                                   " exists and is not spurcast's lock file";
    for (int attempt = 0; attempt < 5; ++attempt) {
      struct stat before {};
      if (::lstat(w.lock_path.c_str(), &before) == 0 && !S_ISREG(before.st_mode))
        throw OutputError(not_a_lock);
      bool created = true;
      int fd =
          ::open(w.lock_path.c_str(), O_RDWR | O_CREAT | O_EXCL | O_NOFOLLOW | O_CLOEXEC, 0666);
      if (fd < 0 && errno == EEXIST) {
        created = false;
        fd = ::open(w.lock_path.c_str(), O_RDWR | O_NOFOLLOW | O_NONBLOCK | O_CLOEXEC);
        if (fd < 0 && errno == ENOENT) continue;
      }
      if (fd < 0) {
        if (errno == ELOOP || errno == ENXIO || errno == EISDIR) throw OutputError(not_a_lock);
        throw OutputError("cannot write " + w.where.path + ": cannot create " + w.lock_path + ": " +
                          system_message(errno));
      }
      struct stat held {};
      if (::fstat(fd, &held) != 0 || !S_ISREG(held.st_mode)) {
        ::close(fd);
        throw OutputError(not_a_lock);
      }
      if (::flock(fd, LOCK_EX | LOCK_NB) != 0) {
        const int saved = errno;
        ::close(fd);
        if (saved == EWOULDBLOCK) throw OutputError(conflict);
        throw OutputError("cannot write " + w.where.path + ": cannot lock " + w.lock_path + ": " +
                          system_message(saved));
      }
      struct stat named {};
      if (::lstat(w.lock_path.c_str(), &named) != 0 || named.st_dev != held.st_dev ||
          named.st_ino != held.st_ino) {
        ::close(fd);
        continue;
      }
      if (created) {
        const std::string text = output_lock_text;
        (void)!::write(fd, text.data(), text.size());
      } else {
        char buffer[64] = {};
        const ssize_t got = ::pread(fd, buffer, sizeof buffer, 0);
        const std::string text(buffer, got > 0 ? static_cast<std::size_t>(got) : 0);
        if (!text.empty() && text != output_lock_text) {
          ::close(fd);
          throw OutputError(not_a_lock);
        }
      }
      w.lock_fd = fd;
      step("locked " + w.where.path);
      return;
    }
    throw OutputError(conflict);
  }

  void unlock_all() {
    for (Work& w : work_) {
      if (w.lock_fd < 0) continue;
      // Remove the name while still holding the lock, and only if it still is our lock file.
      struct stat held {};
      struct stat named {};
      if (::fstat(w.lock_fd, &held) == 0 && ::lstat(w.lock_path.c_str(), &named) == 0 &&
          held.st_dev == named.st_dev && held.st_ino == named.st_ino) {
        (void)::unlink(w.lock_path.c_str());
      }
      ::close(w.lock_fd);
      w.lock_fd = -1;
    }
  }

  static void check_parent(const Work& w) {
    struct stat parent {};
    if (::stat(w.where.parent.c_str(), &parent) != 0 || !S_ISDIR(parent.st_mode)) {
      if (w.folder)
        throw OutputError("the folder " + w.where.parent +
                          " (parent of the output folder) does not exist");
      throw OutputError("cannot write " + w.where.path + ": the folder " + w.where.parent +
                        " does not exist");
    }
  }

  void inspect(Work& w) {
    struct stat info {};
    if (::lstat(w.where.path.c_str(), &info) != 0) {
      if (errno != ENOENT)
        throw OutputError("cannot write " + w.where.path + ": " + system_message(errno));
      w.existed = false;
      step("checked " + w.where.path);
      return;
    }
    w.existed = true;
    w.device = info.st_dev;
    w.inode = info.st_ino;
    if (w.folder) {
      if (!S_ISDIR(info.st_mode)) throw OutputError(w.where.path + " exists and is not a folder");
      w.old_names = check_replaceable(w.where.path);
    } else if (!S_ISREG(info.st_mode)) {
      throw OutputError("cannot write " + w.where.path + ": it is " + kind_of(info.st_mode) +
                        ", not a regular file; spurcast replaces only regular files");
    }
    step("checked " + w.where.path);
  }

  void stage(Work& w) {
    // A fresh name each try: O_EXCL (and mkdir) fail on any existing name, a planted symbolic
    // link included, which is then never followed.
    int error_number = EEXIST;
    for (int attempt = 0; attempt < 100 && error_number == EEXIST; ++attempt) {
      const std::string name = w.where.path + ".tmp-" + suffix();
      if (w.folder) {
        if (::mkdir(name.c_str(), 0777) == 0) {
          w.temporary = name;
          break;
        }
        error_number = errno;
      } else {
        const int fd =
            ::open(name.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_NOFOLLOW | O_CLOEXEC, 0666);
        if (fd >= 0) {
          w.temporary = name;
          step("created " + name);
          write_and_close(fd, w.files->front().content, w.where.path);
          step("wrote " + w.where.path);
          return;
        }
        error_number = errno;
      }
    }
    if (w.temporary.empty()) {
      throw OutputError("cannot write " + w.where.path + ": cannot create a temporary " +
                        (w.folder ? "folder" : "file") +
                        " beside it: " + system_message(error_number));
    }
    step("created " + w.temporary);
    std::vector<std::string> names;
    for (const OutputFile& file : *w.files) {
      write_in_folder(w, file.name, file.content);
      names.push_back(file.name);
    }
    write_in_folder(w, output_marker_name, output_marker_text(names));
    fsync_folder(w.temporary);
    step("flushed " + w.temporary);
  }

  void write_in_folder(Work& w, const std::string& name, const std::string& content) {
    const std::string path = w.temporary + "/" + name;
    const int fd = ::open(path.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_NOFOLLOW | O_CLOEXEC, 0666);
    if (fd < 0) throw OutputError("cannot create " + path + ": " + system_message(errno));
    w.staged_names.insert(name);
    write_and_close(fd, content, path);
    step("wrote " + w.where.path + "/" + name);
  }

  void place(Work& w) {
    const bool refuse = options_.without_rename_exchange;
    if (!w.existed) {
      if (rename_with_flags(w.temporary, w.where.path, RENAME_NOREPLACE, refuse) == 0) {
        w.placed = Work::Placed::created;
      } else if (errno == EEXIST || errno == ENOTEMPTY) {
        throw OutputError("another spurcast run is writing " + w.where.path +
                          " at the same time; nothing was written");
      } else if (unsupported(errno)) {
        // Fallback: a plain rename. Over a folder it fails unless that folder is empty.
        if (::rename(w.temporary.c_str(), w.where.path.c_str()) != 0) {
          throw OutputError("cannot rename " + w.temporary + " to " + w.where.path + ": " +
                            system_message(errno));
        }
        w.placed = Work::Placed::created;
      } else {
        throw OutputError("cannot rename " + w.temporary + " to " + w.where.path + ": " +
                          system_message(errno));
      }
      step("placed " + w.where.path);
      return;
    }
    if (rename_with_flags(w.temporary, w.where.path, RENAME_EXCHANGE, refuse) == 0) {
      w.placed = Work::Placed::exchanged;
      // The temporary name now holds what was at the target: it must be what step 2 inspected.
      struct stat swapped {};
      if (::lstat(w.temporary.c_str(), &swapped) != 0 || swapped.st_dev != w.device ||
          swapped.st_ino != w.inode) {
        throw OutputError(
            w.where.path +
            " was changed by another program while spurcast wrote it; nothing was replaced");
      }
      step("placed " + w.where.path);
      return;
    }
    if (!unsupported(errno)) {
      throw OutputError("cannot rename " + w.temporary + " to " + w.where.path + ": " +
                        system_message(errno));
    }
    if (!w.folder) {
      // rename(2) replaces a file in one step; step 2 saw a regular file there. A hard link
      // TARGET.old-XXXXXX to the old file keeps it for a roll-back where links work.
      std::string kept;
      for (int attempt = 0; attempt < 100 && kept.empty(); ++attempt) {
        const std::string name = w.where.path + ".old-" + suffix();
        if (::link(w.where.path.c_str(), name.c_str()) == 0)
          kept = name;
        else if (errno != EEXIST)
          break;
      }
      if (::rename(w.temporary.c_str(), w.where.path.c_str()) != 0) {
        const int saved = errno;
        if (!kept.empty()) (void)::unlink(kept.c_str());
        throw OutputError("cannot rename " + w.temporary + " to " + w.where.path + ": " +
                          system_message(saved));
      }
      if (kept.empty()) {
        w.placed = Work::Placed::created;  // the old file is gone; a roll-back removes the new one
        w.temporary.clear();
      } else {
        w.placed = Work::Placed::exchanged;
        w.temporary = kept;
      }
      step("placed " + w.where.path);
      return;
    }
    // Fallback for a folder: reserve TARGET.old-XXXXXX with mkdir (a directory may replace an empty
    // one), move the old report there, then the new one in; on failure move the old one back.
    std::string aside;
    for (int attempt = 0; attempt < 100 && aside.empty(); ++attempt) {
      const std::string name = w.where.path + ".old-" + suffix();
      if (::mkdir(name.c_str(), 0700) == 0)
        aside = name;
      else if (errno != EEXIST)
        break;
    }
    if (aside.empty())
      throw OutputError("cannot write " + w.where.path +
                        ": cannot make a folder beside it: " + system_message(errno));
    if (::rename(w.where.path.c_str(), aside.c_str()) != 0) {
      const int saved = errno;
      (void)::rmdir(aside.c_str());
      throw OutputError("cannot rename " + w.where.path + " to " + aside + ": " +
                        system_message(saved));
    }
    w.aside = aside;
    w.placed = Work::Placed::moved_aside;
    step("moved aside " + w.where.path);
    if (::rename(w.temporary.c_str(), w.where.path.c_str()) != 0) {
      throw OutputError("cannot rename " + w.temporary + " to " + w.where.path + ": " +
                        system_message(errno));
    }
    w.placed = Work::Placed::exchanged;
    w.temporary.swap(w.aside);  // the old report is removed from `temporary` like an exchanged one
    w.aside.clear();
    step("placed " + w.where.path);
  }

  /// Undoes step 4 for every target, then removes every temporary (only what we wrote in it).
  void roll_back() {
    for (auto it = work_.rbegin(); it != work_.rend(); ++it) {
      Work& w = *it;
      switch (w.placed) {
        case Work::Placed::exchanged:
          if (rename_with_flags(w.temporary, w.where.path, RENAME_EXCHANGE,
                                options_.without_rename_exchange) != 0) {
            // Fallback: the new output goes back to a fresh temporary name, the old one returns.
            const std::string back = w.where.path + ".tmp-" + suffix();
            if (::rename(w.where.path.c_str(), back.c_str()) != 0)
              continue;  // keep both rather than lose one
            if (::rename(w.temporary.c_str(), w.where.path.c_str()) != 0) {
              (void)::rename(back.c_str(), w.where.path.c_str());
              continue;
            }
            w.temporary = back;
          }
          break;
        case Work::Placed::created:
          // Without a temporary name the old file was replaced in place (fallback, no hard link):
          // the new file stays rather than leave nothing.
          if (w.temporary.empty()) continue;
          if (::rename(w.where.path.c_str(), w.temporary.c_str()) != 0) continue;
          break;
        case Work::Placed::moved_aside:
          (void)::rename(w.aside.c_str(), w.where.path.c_str());
          break;
        case Work::Placed::no:
          break;
      }
      w.placed = Work::Placed::no;
    }
    for (Work& w : work_) {
      // A target whose placing could not be undone keeps what is at its temporary name.
      if (w.temporary.empty() || w.placed != Work::Placed::no) continue;
      if (w.folder) {
        remove_our_folder(w.temporary, w.staged_names);
      } else {
        (void)::unlink(w.temporary.c_str());
      }
      w.temporary.clear();
    }
  }

  /// Step 5: the earlier output, now at the temporary name, is removed.
  void remove_old(Work& w) {
    if (w.placed != Work::Placed::exchanged) return;
    if (w.folder) {
      remove_our_folder(w.temporary, w.old_names);
    } else {
      (void)::unlink(w.temporary.c_str());
    }
    step("removed the earlier " + w.where.path);
  }
};

}  // namespace

std::string output_marker_text(const std::vector<std::string>& names) {
  std::string text =
      "# written by spurcast, which replaces this folder only while it holds nothing but the files "
      "below\n";
  text += marker_tool_prefix;
  text += SPURCAST_VERSION "\n";
  for (const std::string& name : names) text += marker_file_prefix + name + "\n";
  return text;
}

OutputSet::OutputSet(OutputDirectoryOptions options) : options_(std::move(options)) {}

void OutputSet::add_file(const std::string& path, std::string content) {
  targets_.push_back(Target{false, path, {OutputFile{"", std::move(content)}}});
}

void OutputSet::add_folder(const std::string& directory, std::vector<OutputFile> files) {
  targets_.push_back(Target{true, directory, std::move(files)});
}

void OutputSet::commit() {
  std::vector<Work> work;
  std::set<std::string> seen;
  for (const Target& target : targets_) {
    if (target.folder) check_names(target.files);
    Work w;
    w.folder = target.folder;
    w.where = split_target(target.path, target.folder);
    w.files = &target.files;
    if (!seen.insert(w.where.path).second)
      throw OutputError(w.where.path + " is given twice as an output");
    work.push_back(std::move(w));
  }
  // Locks are taken in one order, so two runs sharing targets cannot each hold one of them.
  std::sort(work.begin(), work.end(),
            [](const Work& a, const Work& b) { return a.where.path < b.where.path; });
  const SignalDeferral deferral;
  Commit(options_, work).run();
}

void write_output_directory(const std::string& directory, const std::vector<OutputFile>& files,
                            const OutputDirectoryOptions& options) {
  OutputSet set(options);
  set.add_folder(directory, files);
  set.commit();
}

void check_output_folder(const std::string& directory) {
  const TargetPath where = split_target(directory, true);
  struct stat parent {};
  if (::stat(where.parent.c_str(), &parent) != 0 || !S_ISDIR(parent.st_mode)) {
    throw OutputError("the folder " + where.parent +
                      " (parent of the output folder) does not exist");
  }
  struct stat info {};
  if (::lstat(where.path.c_str(), &info) != 0) return;
  if (!S_ISDIR(info.st_mode)) throw OutputError(where.path + " exists and is not a folder");
  (void)check_replaceable(where.path);
}

void write_file_atomically(const std::string& path, const std::string& content,
                           const OutputDirectoryOptions& options) {
  OutputSet set(options);
  set.add_file(path, content);
  set.commit();
}

}  // namespace spurcast

#pragma once
/// Writing the user's output files: a report folder, a CSV or SVG file, or several of them that
/// belong together, each appearing complete or not at all, and never at the cost of a file the
/// tool did not write (docs/design.md §10).
///
/// How a write goes (OutputSet::commit; write_output_directory and write_file_atomically are one-
/// target sets):
/// 1. Lock: every target TARGET is locked with flock(2) on `TARGET.spurcast-lock` beside it
///    (created if missing, removed when done). The lock protects the check of what TARGET holds,
///    the swap and the removal of the earlier output from a second spurcast run writing the same
///    target: that run fails at once with OutputError "another spurcast run is writing ...". It
///    is advisory: programs other than spurcast do not take it.
/// 2. Check: a file target must be missing or a regular file (a symbolic link, device, FIFO,
///    socket or folder is refused); a folder target must be missing, an empty folder, or a folder
///    spurcast wrote: it holds a `.spurcast-output` marker naming the tool, its version and the
///    files it wrote, and nothing beyond them. Anything else is refused.
/// 3. Stage: every target is written to a temporary sibling `TARGET.tmp-XXXXXX` (six random
///    characters, created with O_CREAT|O_EXCL|O_NOFOLLOW or mkdir, so a name planted in advance,
///    a symbolic link included, is never followed: another name is drawn), flushed with fsync.
/// 4. Place: each temporary takes its target's place with renameat2(RENAME_EXCHANGE) when the
///    target exists (one atomic step: the target holds the old or the new output at every moment)
///    or RENAME_NOREPLACE when it does not; what was swapped out is checked to be the same file
///    or folder that step 2 inspected, else it is swapped back and the write refused.
///    Fallback where the filesystem refuses renameat2 (EINVAL, or ENOSYS on an old kernel): a
///    file is renamed over its target (rename(2) replaces a file atomically); an existing folder
///    is first renamed into an empty folder `TARGET.old-XXXXXX` made for it, then the new one is
///    renamed in, and on failure the old one is renamed back. A kill between those two renames
///    leaves TARGET missing and the complete earlier report at `TARGET.old-XXXXXX`: the way back
///    is to rename it.
/// 5. Clean up: the earlier output, now at the temporary name, is removed: a folder's listed
///    files, its marker, then the folder (left in place if anything else appeared in it).
/// If anything fails before step 5, every target already placed is swapped back, every temporary
/// is removed, and existing targets are left as they were. SIGINT, SIGTERM and SIGHUP during a
/// write are held until a safe point: before step 4 the temporaries are removed, from step 4 on
/// the write is finished first; then the signal is raised again with its previous disposition.
/// A SIGKILL cannot be caught: it can leave a `.tmp-` sibling and a lock file behind (a later
/// run reuses the lock file), never a half-written target.
///
/// Example:
///   write_output_directory("spurcast-report", {{"summary.json", json}, {"scan.csv", csv}});
///   OutputSet outputs;
///   outputs.add_file("sweep.csv", csv);
///   outputs.add_file("sweep.svg", svg);
///   outputs.commit();  // both files, or neither
#include <cstddef>
#include <functional>
#include <string>
#include <vector>

#include "core/input/error.hpp"

namespace spurcast {

/// The output could not be written (the target is not ours to replace, a write failed, another run
/// writes the same target). The CLI maps it to exit code 3, apart from bad input (2): the inputs
/// were fine, the destination was not (docs/design.md §4).
class OutputError : public Error {
 public:
  using Error::Error;
};

/// The marker file of every output folder (see above).
inline constexpr const char* output_marker_name = ".spurcast-output";

/// The marker's text for a folder holding `names` (plain file names, the marker itself excluded):
/// a comment line, `tool: spurcast VERSION`, then one `file: NAME` line per file.
[[nodiscard]] std::string output_marker_text(const std::vector<std::string>& names);

/// The text of a lock file `TARGET.spurcast-lock` (step 1 above). An existing file at that name is
/// reused only when it is empty or holds exactly this text; anything else there is refused.
inline constexpr const char* output_lock_text = "spurcast output lock\n";

/// One file of an output folder: a plain file name (no directory part) and its bytes.
struct OutputFile {
  std::string name;
  std::string content;
};

/// Test hooks only: nothing in the CLI sets them and no user input reaches them.
struct OutputDirectoryOptions {
  /// Called after each step of a commit with the step's number (1, 2, ...) and a short name
  /// ("locked out", "wrote out/scan.csv", "placed out", ...). A test may end the process there
  /// (std::_Exit, as a SIGKILL would), raise a signal, block, or throw to make the step fail.
  std::function<void(std::size_t step, const std::string& what)> after_step;
  /// Behave as on a filesystem that refuses renameat2 (EINVAL): take the fallback of step 4.
  bool without_rename_exchange = false;
  /// Draws the random part of the next temporary name; empty = six random letters and digits.
  std::function<std::string()> next_temporary_suffix;
};

/// Several outputs of one command, written together or not at all (see above).
class OutputSet {
 public:
  explicit OutputSet(OutputDirectoryOptions options = {});

  /// Adds a single file at `path` (replaced if it is a regular file).
  void add_file(const std::string& path, std::string content);
  /// Adds the folder `directory` holding `files` (plain, unique names, not the marker's).
  void add_folder(const std::string& directory, std::vector<OutputFile> files);

  /// Writes every added output as described above. Throws OutputError naming the target when a
  /// target is refused, locked by another run, or a write or rename fails; nothing is then
  /// changed at any target and no temporary is left.
  void commit();

 private:
  struct Target {
    bool folder = false;
    std::string path;
    std::vector<OutputFile> files;  // a file target: one entry, its name unused
  };
  OutputDirectoryOptions options_;
  std::vector<Target> targets_;
};

/// Writes `files` as the folder `directory` (created or replaced as described above). File names
/// must be plain names, unique, and not the marker's. Throws OutputError when the parent folder
/// does not exist, `directory` exists but is not a folder, is a non-empty folder without a readable
/// marker or holds a file its marker does not list, a name is invalid, or a write fails; the
/// temporary folder is removed on every error.
void write_output_directory(const std::string& directory, const std::vector<OutputFile>& files,
                            const OutputDirectoryOptions& options = {});

/// Checks, without writing, that `directory` could be written as an output folder now (steps 2
/// and 3's parent check above), so a command can refuse before a long computation. Throws the same
/// OutputError as write_output_directory would; the write checks again.
void check_output_folder(const std::string& directory);

/// Writes one file at `path` as described above: nobody ever reads a half-written file, a target
/// that exists and is not a regular file is refused. Throws OutputError naming `path`.
void write_file_atomically(const std::string& path, const std::string& content,
                           const OutputDirectoryOptions& options = {});

}  // namespace spurcast

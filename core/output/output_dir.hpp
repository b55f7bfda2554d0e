#pragma once
/// Writing a set of output files as one unit: the files go into a temporary sibling folder
/// `DIR.tmp-XXXXXX` which is renamed into place only when every file is written and flushed, so an
/// interrupted run never leaves a half-written DIR. An existing DIR is replaced only after the new
/// one is complete: the old folder is renamed away (`DIR.old-XXXXXX`), the new one renamed in, and
/// the old one removed.
///
/// Example:
///   write_output_directory("spurcast-report", {{"summary.json", json}, {"scan.csv", csv}});
#include <cstddef>
#include <optional>
#include <string>
#include <vector>

namespace spurcast {

/// One file of an output folder: a plain file name (no directory part) and its bytes.
struct OutputFile {
  std::string name;
  std::string content;
};

struct OutputDirectoryOptions {
  /// Test hook: terminate the process (std::_Exit, as a SIGKILL would) after this many files
  /// have been written into the temporary folder. The CLI sets it from the environment variable
  /// SPURCAST_TEST_ABORT_AFTER_FILES; nothing else should.
  std::optional<std::size_t> abort_after_files;
  /// The file whose presence marks an existing folder as a previous output of ours, which may be
  /// replaced. An existing non-empty folder without it is never touched (a mistyped -o must not
  /// delete somebody's folder).
  std::string marker_file = "summary.json";
};

/// Writes `files` as the folder `directory` (created or replaced as described above). File names
/// must be plain names, unique. Throws Error when the parent folder does not exist, `directory`
/// exists but is a file or a non-empty folder without the marker, a name is invalid, or a write
/// fails; the temporary folder is removed on every error.
void write_output_directory(const std::string& directory, const std::vector<OutputFile>& files,
                            const OutputDirectoryOptions& options = {});

/// Writes one file: first to `path.tmp-<pid>` beside it, then renamed over `path`, so nobody ever
/// reads a half-written file. Throws Error naming `path` when the write or the rename fails (the
/// temporary file is removed then).
void write_file_atomically(const std::string& path, const std::string& content);

}  // namespace spurcast

#pragma once
/// Writing a set of output files as one unit: the files go into a temporary sibling folder
/// `DIR.tmp-XXXXXX` which is renamed into place only when every file is written and flushed, so an
/// interrupted run never leaves a half-written DIR. An existing DIR is replaced only after the new
/// one is complete: the old folder is renamed away (`DIR.old-XXXXXX`), the new one renamed in, and
/// the old one removed.
///
/// Only a folder that spurcast wrote is ever replaced: every output folder holds a marker file,
/// `.spurcast-output`, naming the tool, its version and every file it wrote. An existing folder is
/// replaced only when it is empty, or when its marker is present and it holds nothing beyond the
/// listed files; anything else is refused (never remove a file the tool did not write,
/// docs/design.md §10).
///
/// Example:
///   write_output_directory("spurcast-report", {{"summary.json", json}, {"scan.csv", csv}});
#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "core/input/error.hpp"

namespace spurcast {

/// One file of an output folder: a plain file name (no directory part) and its bytes.
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

struct OutputFile {
  std::string name;
  std::string content;
};

struct OutputDirectoryOptions {
  /// Test hook: terminate the process (std::_Exit, as a SIGKILL would) after this many files
  /// have been written into the temporary folder. The CLI sets it from the environment variable
  /// SPURCAST_TEST_ABORT_AFTER_FILES; nothing else should.
  std::optional<std::size_t> abort_after_files;
};

/// Writes `files` as the folder `directory` (created or replaced as described above). File names
/// must be plain names, unique, and not the marker's. Throws OutputError when the parent folder does
/// not exist, `directory` exists but is not a folder, is a non-empty folder without a readable
/// marker or holds a file its marker does not list, a name is invalid, or a write fails; the
/// temporary folder is removed on every error.
void write_output_directory(const std::string& directory, const std::vector<OutputFile>& files,
                            const OutputDirectoryOptions& options = {});

/// Writes one file: first to `path.tmp-<pid>` beside it, then renamed over `path`, so nobody ever
/// reads a half-written file. Throws Error naming `path` when the write or the rename fails (the
/// temporary file is removed then).
void write_file_atomically(const std::string& path, const std::string& content);

}  // namespace spurcast

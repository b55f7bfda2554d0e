#include "core/source/capture.hpp"

#include <fast_float/fast_float.h>
#include <fcntl.h>
#include <sys/mman.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cctype>
#include <cerrno>
#include <charconv>
#include <cstdint>
#include <cstdio>
#include <cmath>
#include <cstring>
#include <filesystem>
#include <thread>
#include <tuple>
#include <utility>
#include <vector>

#include "core/input/input_file.hpp"
#include "core/source/huge_pages.hpp"
#include "core/input/units.hpp"

namespace spurcast {

namespace {

/// A scope never writes a line this long; a longer one means the file is not one sample a line.
constexpr std::size_t max_line_bytes = std::size_t{1} << 20;
/// Header lines looked at before giving up on finding numeric data.
constexpr std::size_t max_header_lines = 1000;
/// The largest captured value taken, in volts or amperes after scaling: 1e9 (a thousand times the
/// largest swing a described source may have, max_amplitude_v; the spectrum's power sums stay
/// finite). Judgement.
constexpr double max_capture_value = 1e9;
/// Below this many bytes a second parser thread costs more than it saves (thread start ~50 µs).
constexpr std::size_t min_chunk_bytes = std::size_t{1} << 20;
/// Time stamps within 1 % of a sample interval of the uniform grid count as uniformly sampled
/// (common practice: a scope's timebase is exact, the text only rounds it; 1 % of dt is a phase
/// error of 0.03 rad at the Nyquist frequency).
constexpr double uniform_tolerance_intervals = 0.01;

enum class DelimiterMode { comma, semicolon, blanks };

bool is_blank(char c) { return c == ' ' || c == '\t'; }

std::string quoted_cell(std::string_view cell) {
  if (cell.size() > 24) return "\"" + std::string(cell.substr(0, 24)) + "...\"";
  return "\"" + std::string(cell) + "\"";
}

std::string printable_char(char c) {
  if (c == '\t') return "a tab";
  if (c == '\r' || c == '\n') return "the end of the line";
  if (static_cast<unsigned char>(c) < 0x20 || static_cast<unsigned char>(c) >= 0x7f) {
    char buffer[16];
    std::snprintf(buffer, sizeof buffer, "byte 0x%02x", static_cast<unsigned char>(c));
    return buffer;
  }
  return std::string("'") + c + "'";
}

std::string format_number(double x) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.9g", x);
  return buffer;
}

std::string delimiter_name(DelimiterMode mode) {
  switch (mode) {
    case DelimiterMode::comma: return "','";
    case DelimiterMode::semicolon: return "';'";
    case DelimiterMode::blanks: return "a blank";
  }
  return "";
}

/// 1-based line and column of byte `offset` in `text` (slow: error paths only).
SourcePosition position_at(std::string_view text, std::size_t offset, const std::string& name) {
  offset = std::min(offset, text.size());
  const std::size_t lines = static_cast<std::size_t>(std::count(text.begin(), text.begin() + static_cast<std::ptrdiff_t>(offset), '\n'));
  const std::size_t line_start = text.rfind('\n', offset == 0 ? std::string_view::npos : offset - 1);
  const std::size_t column_index = (offset == 0 || line_start == std::string_view::npos) ? offset : offset - line_start - 1;
  return SourcePosition{name, static_cast<int>(lines + 1), static_cast<int>(column_index + 1)};
}

/// The cell starting at p: up to the delimiter or the end of the line.
std::string_view cell_at(const char* p, const char* end, DelimiterMode mode) {
  const char* q = p;
  while (q < end && *q != '\n' && *q != '\r') {
    if (mode == DelimiterMode::comma && *q == ',') break;
    if (mode == DelimiterMode::semicolon && *q == ';') break;
    if (mode == DelimiterMode::blanks && is_blank(*q)) break;
    ++q;
  }
  return {p, static_cast<std::size_t>(q - p)};
}

/// A parse failure inside a chunk: where (byte offset in the text) and what.
struct ParseFailure {
  std::size_t offset = std::string_view::npos;
  std::string message;
};

struct ChunkResult {
  std::vector<double> time;
  std::vector<double> value;  ///< already multiplied by the scale and the header's unit prefix
  std::size_t first_line_offset = 0;
  ParseFailure failure;
};

/// How a chunk is parsed, beyond its bytes.
struct ChunkJob {
  std::size_t time_reserve = 0;   ///< samples to reserve for the time stamps
  std::size_t value_reserve = 0;  ///< samples to reserve for the values (the whole record in chunk 0)
  double value_factor = 1.0;      ///< scale × unit prefix, applied as the values are stored
  bool release_pages = false;     ///< the text is a read-only file mapping: drop the pages behind
};

/// Pages of a read-only file mapping behind the parser are handed back every this many bytes, so
/// a large capture is not resident twice (as text and as numbers). A dropped page that is read
/// again (an error message, the resolution probe at the end) is simply read from the file again.
constexpr std::size_t release_step_bytes = std::size_t{32} << 20;

void release_mapped_pages(const char* from, const char* to) {
  const auto page = static_cast<std::uintptr_t>(::sysconf(_SC_PAGESIZE));
  const std::uintptr_t first = (reinterpret_cast<std::uintptr_t>(from) + page - 1) / page * page;
  const std::uintptr_t last = reinterpret_cast<std::uintptr_t>(to) / page * page;
  // Only whole pages inside [from, to): a page shared with the neighbouring chunk stays.
  if (last > first) ::madvise(reinterpret_cast<void*>(first), last - first, MADV_DONTNEED);
}

struct ColumnPlan {
  int time_index = 1;   // 1-based
  int value_index = 2;  // 1-based
  int last_index = 2;   // max of the two
};

/// Parses whole lines in [begin, end) of `text` (end is at a line boundary or the end of the data).
/// The hot loop of the loader: one fast_float call per used cell, no allocation per line.
template <DelimiterMode mode>
void parse_chunk(const char* text_begin, const char* begin, const char* end, const ColumnPlan& plan,
                 const ChunkJob& job, ChunkResult& out) {
  constexpr char delimiter = mode == DelimiterMode::comma ? ',' : ';';
  out.first_line_offset = static_cast<std::size_t>(begin - text_begin);
  reserve_with_huge_pages(out.time, job.time_reserve);
  reserve_with_huge_pages(out.value, job.value_reserve);
  const double factor = job.value_factor;
  const char* released_to = begin;
  double previous_time = -HUGE_VAL;
  bool have_previous = false;
  const char* p = begin;
  auto fail = [&](const char* at, std::string message) {
    out.failure.offset = static_cast<std::size_t>(at - text_begin);
    out.failure.message = std::move(message);
  };
  auto parse_number = [&](const char*& q, double& number) __attribute__((always_inline)) -> bool {
    // Some scopes write an explicit '+' ("+1.0E-06"), which fast_float (like std::from_chars) rejects.
    const char* digits = (q + 1 < end && *q == '+' && q[1] != '-' && q[1] != '+') ? q + 1 : q;
    const auto result = fast_float::from_chars(digits, end, number);
    const char* after = result.ptr;
    const bool ends_cell = after == end || *after == '\n' || *after == '\r' || is_blank(*after) ||
                           (mode != DelimiterMode::blanks && *after == delimiter);
    if (result.ec == std::errc() && !ends_cell && (*after == ',' || *after == ';')) {
      if (mode == DelimiterMode::semicolon && *after == ',') {
        fail(after, "expected ';' or the end of the cell, found ',' (a decimal comma? write 0.5, not 0,5)");
      } else {
        fail(after, "expected " + delimiter_name(mode) + " between columns, found " + printable_char(*after) +
                        " (mixed delimiters)");
      }
      return false;
    }
    if (result.ec != std::errc() || !ends_cell) {
      const std::string_view cell = cell_at(q, end, mode);
      fail(q, cell.empty() ? "expected a number, found an empty cell"
                           : "expected a number, found " + quoted_cell(cell));
      return false;
    }
    if (!std::isfinite(number)) {
      fail(q, "expected a finite number, found " + quoted_cell(cell_at(q, end, mode)));
      return false;
    }
    q = after;
    return true;
  };
  while (p < end) {
    const char* line_start = p;
    double time = 0.0;
    double value = 0.0;
    const char* time_cell = p;
    const char* value_cell = p;
    {
      const char* q = p;
      while (q < end && is_blank(*q)) ++q;
      if (q == end || *q == '\n' || *q == '\r') {
        fail(line_start, "expected a number, found an empty line");
        return;
      }
    }
    for (int column = 1; column <= plan.last_index; ++column) {
      while (p < end && is_blank(*p)) ++p;
      if (column > 1) {
        if constexpr (mode != DelimiterMode::blanks) {
          if (p >= end || *p != delimiter) {
            fail(p, "expected " + delimiter_name(mode) + " and column " + std::to_string(column) + ", found " +
                        (p >= end ? std::string("the end of the file") : printable_char(*p)));
            return;
          }
          ++p;
          while (p < end && is_blank(*p)) ++p;
        } else if (p >= end || *p == '\n' || *p == '\r') {
          fail(p, "expected column " + std::to_string(column) + ", found the end of the line");
          return;
        }
      }
      if (column == plan.time_index) {
        time_cell = p;
        if (!parse_number(p, time)) return;
      } else if (column == plan.value_index) {
        value_cell = p;
        if (!parse_number(p, value)) return;
      } else {
        p += cell_at(p, end, mode).size();
      }
    }
    // The rest of the line: blanks, more columns, then CR LF or LF.
    while (p < end && is_blank(*p)) ++p;
    if (p < end && *p != '\n' && *p != '\r') {
      if (mode == DelimiterMode::blanks || *p == delimiter) {
        const void* newline = std::memchr(p, '\n', static_cast<std::size_t>(end - p));
        p = newline ? static_cast<const char*>(newline) : end;
        if (p > line_start && p[-1] == '\r') --p;
      } else {
        fail(p, "expected " + delimiter_name(mode) + " or the end of the line, found " + printable_char(*p));
        return;
      }
    }
    if (p < end && *p == '\r') ++p;
    if (p < end) {
      if (*p != '\n') {
        fail(p, "expected the end of the line, found " + printable_char(*p));
        return;
      }
      ++p;
    }
    if (static_cast<std::size_t>(p - line_start) > max_line_bytes) {
      fail(line_start, "line of " + std::to_string(p - line_start) + " bytes, expected at most " +
                           std::to_string(max_line_bytes) + " (one sample a line)");
      return;
    }
    if (have_previous && !(time > previous_time)) {
      fail(time_cell, "expected a time after the previous line's " + format_number(previous_time) +
                          ", found " + format_number(time));
      return;
    }
    previous_time = time;
    have_previous = true;
    out.time.push_back(time);
    const double scaled = value * factor;
    if (!std::isfinite(scaled)) {
      fail(value_cell, "the value " + format_number(value) + " times the scale and unit (" + format_number(factor) +
                           ") is beyond the range of a double");
      return;
    }
    // Values near 1e307 are finite but their spectrum's power sums are not ("-nan Hz", issue 14).
    if (std::fabs(scaled) > max_capture_value) {
      fail(value_cell, "expected a value of at most " + format_number(max_capture_value) +
                           " V or A in magnitude after the scale and unit (beyond any converter; larger values "
                           "overflow the spectrum), found " + format_number(scaled));
      return;
    }
    out.value.push_back(scaled);
    if (job.release_pages && static_cast<std::size_t>(p - released_to) >= release_step_bytes) {
      release_mapped_pages(released_to, p);
      released_to = p;
    }
  }
}


/// Resolution of a printed decimal: "4.19430300e-03" → 1e-11, "0.00012" → 1e-5, "12" → 1.
double decimal_resolution(std::string_view cell) {
  std::size_t i = 0;
  if (i < cell.size() && (cell[i] == '-' || cell[i] == '+')) ++i;
  int fraction_digits = 0;
  bool in_fraction = false;
  for (; i < cell.size(); ++i) {
    const char c = cell[i];
    if (c == '.') {
      in_fraction = true;
    } else if (c >= '0' && c <= '9') {
      if (in_fraction) ++fraction_digits;
    } else {
      break;
    }
  }
  int exponent = 0;
  if (i < cell.size() && (cell[i] == 'e' || cell[i] == 'E')) {
    ++i;
    const auto result = std::from_chars(cell.data() + i + (i < cell.size() && cell[i] == '+' ? 1 : 0),
                                        cell.data() + cell.size(), exponent);
    if (result.ec != std::errc()) exponent = 0;
  }
  return std::pow(10.0, exponent - fraction_digits);
}

std::string_view trim(std::string_view s) {
  while (!s.empty() && (is_blank(s.front()) || s.front() == '\r')) s.remove_prefix(1);
  while (!s.empty() && (is_blank(s.back()) || s.back() == '\r')) s.remove_suffix(1);
  return s;
}

std::string_view unquote(std::string_view s) {
  s = trim(s);
  if (s.size() >= 2 && (s.front() == '"' || s.front() == '\'') && s.back() == s.front()) s = trim(s.substr(1, s.size() - 2));
  return s;
}

std::vector<std::string> split_header(std::string_view line, DelimiterMode mode, bool tabs_only) {
  std::vector<std::string> fields;
  if (mode == DelimiterMode::blanks && tabs_only) {
    std::size_t i = 0;
    while (true) {
      const std::size_t j = line.find('\t', i);
      fields.emplace_back(unquote(line.substr(i, j == std::string_view::npos ? std::string_view::npos : j - i)));
      if (j == std::string_view::npos) break;
      i = j + 1;
    }
    return fields;
  }
  if (mode == DelimiterMode::blanks) {
    std::size_t i = 0;
    while (i < line.size()) {
      while (i < line.size() && (is_blank(line[i]) || line[i] == '\r')) ++i;
      if (i >= line.size()) break;
      std::size_t j = i;
      while (j < line.size() && !is_blank(line[j]) && line[j] != '\r') ++j;
      fields.emplace_back(unquote(line.substr(i, j - i)));
      i = j;
    }
    return fields;
  }
  const char delimiter = mode == DelimiterMode::comma ? ',' : ';';
  std::size_t i = 0;
  while (true) {
    const std::size_t j = line.find(delimiter, i);
    fields.emplace_back(unquote(line.substr(i, j == std::string_view::npos ? std::string_view::npos : j - i)));
    if (j == std::string_view::npos) break;
    i = j + 1;
  }
  return fields;
}

std::string lower(std::string_view s) {
  std::string out(s);
  for (char& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

/// The unit text of a header: inside the last (...) or [...], else after the last '/', else the
/// whole header.
std::string unit_token(std::string_view header) {
  header = trim(header);
  for (const auto& [open, close] : {std::pair{'(', ')'}, std::pair{'[', ']'}}) {
    const std::size_t c = header.rfind(close);
    if (c != std::string_view::npos) {
      const std::size_t o = header.rfind(open, c);
      if (o != std::string_view::npos) return std::string(trim(header.substr(o + 1, c - o - 1)));
    }
  }
  const std::size_t slash = header.rfind('/');
  if (slash != std::string_view::npos) return std::string(trim(header.substr(slash + 1)));
  return std::string(header);
}

/// SI prefix factor of a unit written as prefix + symbol ("mV" with symbol "V" → 1e-3).
std::optional<double> prefix_factor(std::string_view unit, std::string_view symbol) {
  if (unit.size() < symbol.size() || unit.substr(unit.size() - symbol.size()) != symbol) return std::nullopt;
  const std::string_view prefix = unit.substr(0, unit.size() - symbol.size());
  if (prefix.empty()) return 1.0;
  if (prefix == "k") return 1e3;
  if (prefix == "m") return 1e-3;
  if (prefix == "u" || prefix == "\xC2\xB5" || prefix == "\xCE\xBC") return 1e-6;
  if (prefix == "n") return 1e-9;
  if (prefix == "p") return 1e-12;
  return std::nullopt;
}

/// Factor of a value header's unit ("CH1 (mV)" → 1e-3) when it is a unit of `quantity`.
std::optional<double> value_unit_from_header(std::string_view header, Quantity quantity) {
  const std::string unit = unit_token(header);
  const std::string low = lower(unit);
  if (quantity == Quantity::voltage) {
    if (low == "volt" || low == "volts") return 1.0;
    return prefix_factor(unit, "V");
  }
  if (low == "amp" || low == "amps" || low == "ampere" || low == "amperes") return 1.0;
  return prefix_factor(unit, "A");
}

/// True when the line's first cell is a number (a data line rather than a header line).
bool starts_with_number(std::string_view line) {
  line = trim(line);
  if (line.empty()) return false;
  double number = 0.0;
  if (line.front() == '+') line.remove_prefix(1);
  const auto result = fast_float::from_chars(line.data(), line.data() + line.size(), number);
  if (result.ec != std::errc()) return false;
  const char* after = result.ptr;
  return after == line.data() + line.size() || *after == ',' || *after == ';' || is_blank(*after);
}

/// True when the line's first cell is a number in double quotes ("1.5e-9",...).
bool starts_with_quoted_number(std::string_view line) {
  if (line.size() < 3 || line.front() != '"') return false;
  const char* digits = line.data() + 1;
  if (*digits == '+') ++digits;
  double number = 0.0;
  const auto result = fast_float::from_chars(digits, line.data() + line.size(), number);
  return result.ec == std::errc() && result.ptr < line.data() + line.size() && *result.ptr == '"';
}

/// Memory map of a whole file, read-only.
class MappedFile {
 public:
  // A regular file only: a FIFO would block open() and a device never ends (input_file.hpp).
  explicit MappedFile(const std::string& path) : file_(path, "capture file"), size_(file_.size_bytes()) {
    if (size_ > 0) {
      // MAP_POPULATE maps a (page-cached) file in one call instead of a fault per page, the
      // faster way for a file of ordinary size. A large one is faulted in as it is read and
      // handed back behind the parser instead (release_pages()), so it is never resident whole.
      const int populate = size_ <= populate_limit_bytes ? MAP_POPULATE : 0;
      void* address = ::mmap(nullptr, size_, PROT_READ, MAP_PRIVATE | populate, file_.descriptor(), 0);
      if (address == MAP_FAILED) {
        throw Error(SourcePosition{path, 0, 0}, "cannot map the capture into memory");
      }
      data_ = static_cast<const char*>(address);
      ::madvise(address, size_, MADV_SEQUENTIAL | MADV_WILLNEED);
    }
  }
  MappedFile(const MappedFile&) = delete;
  MappedFile& operator=(const MappedFile&) = delete;
  ~MappedFile() {
    if (data_ != nullptr) ::munmap(const_cast<char*>(data_), size_);
  }
  [[nodiscard]] std::string_view text() const { return data_ ? std::string_view(data_, size_) : std::string_view(); }
  /// Whether the parser should drop the pages it has read.
  [[nodiscard]] bool release_pages() const { return size_ > populate_limit_bytes; }

  static constexpr std::size_t populate_limit_bytes = std::size_t{256} << 20;

 private:
  InputFile file_;
  const char* data_ = nullptr;
  std::size_t size_ = 0;
};

int resolve_column(const ColumnChoice& choice, const std::vector<std::vector<std::string>>& headers,
                   const SourcePosition& header_position, const std::string& name) {
  if (choice.index > 0) return choice.index;
  if (choice.index < 0) throw Error(SourcePosition{name, 0, 0}, "expected a column number of 1 or more, found " + std::to_string(choice.index));
  for (auto it = headers.rbegin(); it != headers.rend(); ++it) {
    for (std::size_t i = 0; i < it->size(); ++i) {
      if ((*it)[i] == choice.name) return static_cast<int>(i + 1);
    }
  }
  for (auto it = headers.rbegin(); it != headers.rend(); ++it) {
    for (std::size_t i = 0; i < it->size(); ++i) {
      if (lower((*it)[i]) == lower(choice.name)) return static_cast<int>(i + 1);
    }
  }
  if (headers.empty()) {
    throw Error(SourcePosition{name, 0, 0}, "no column named '" + choice.name + "': the capture has no header line");
  }
  const std::vector<std::string>& names = headers.back();
  std::string listed;
  for (const std::string& n : names) listed += (listed.empty() ? "'" : ", '") + n + "'";
  const std::string near = nearest_key(choice.name, names);
  throw Error(header_position, "no column named '" + choice.name + "'" +
                                   (near.empty() ? "" : "; did you mean '" + near + "'?") + " (columns: " + listed + ")");
}

}  // namespace

std::string ColumnChoice::describe() const {
  return index > 0 ? std::to_string(index) : "'" + name + "'";
}

namespace {

// Seconds per time unit, any case; the micro sign as 'u', U+00B5, U+03BC or the Windows-1252 /
// Latin-1 byte 0xB5 (a "Time (µs)" header saved by a Windows scope application).
std::optional<double> seconds_per_time_unit(std::string_view unit) {
  std::string low;
  for (std::size_t i = 0; i < unit.size(); ++i) {
    const unsigned char c = static_cast<unsigned char>(unit[i]);
    if ((c == 0xC2 || c == 0xCE) && i + 1 < unit.size() &&
        static_cast<unsigned char>(unit[i + 1]) == (c == 0xC2 ? 0xB5 : 0xBC)) {
      low += 'u';
      ++i;
    } else {
      low += c == 0xB5 ? 'u' : static_cast<char>(std::tolower(c));
    }
  }
  struct Spelling {
    const char* text;
    double seconds;
  };
  static constexpr Spelling spellings[] = {
      {"s", 1.0},
      {"sec", 1.0},
      {"secs", 1.0},
      {"second", 1.0},
      {"seconds", 1.0},
      {"ms", 1e-3},
      {"msec", 1e-3},
      {"msecs", 1e-3},
      {"millisecond", 1e-3},
      {"milliseconds", 1e-3},
      {"us", 1e-6},
      {"usec", 1e-6},
      {"usecs", 1e-6},
      {"microsecond", 1e-6},
      {"microseconds", 1e-6},
      {"ns", 1e-9},
      {"nsec", 1e-9},
      {"nsecs", 1e-9},
      {"nanosecond", 1e-9},
      {"nanoseconds", 1e-9},
      {"ps", 1e-12},
      {"psec", 1e-12},
      {"psecs", 1e-12},
      {"picosecond", 1e-12},
      {"picoseconds", 1e-12},
      {"min", 60.0},
      {"mins", 60.0},
      {"minute", 60.0},
      {"minutes", 60.0},
  };
  for (const Spelling& spelling : spellings) {
    if (low == spelling.text) return spelling.seconds;
  }
  return std::nullopt;
}

}  // namespace

std::optional<double> time_unit_from_header(std::string_view header) {
  const std::string unit = unit_token(header);
  if (const auto seconds = seconds_per_time_unit(unit)) return *seconds;
  // A unit written as one ("Time (furlong)", "t[ks]", "time/div") that is not a time unit is
  // refused rather than read as seconds; a bare name ("Time") names no unit.
  const std::string_view trimmed = trim(header);
  if (unit.size() != trimmed.size()) {
    throw Error("expected a time unit (s, ms, us, ns, ps or min, any case), found \"" + unit +
                "\"");
  }
  return std::nullopt;
}

namespace {

Capture parse_capture(std::string_view text, const std::string& name, const CaptureSpec& spec,
                      const CaptureLoadOptions& options, bool release_pages) {
  Capture capture;
  capture.file = name;
  capture.switching_frequency_hz = spec.switching_frequency_hz;
  if (spec.scale == 0.0 || !std::isfinite(spec.scale)) {
    throw Error(SourcePosition{name, 0, 0}, "expected a finite, non-zero scale, found " + format_number(spec.scale));
  }
  std::size_t start = 0;
  if (text.substr(0, 3) == "\xEF\xBB\xBF") start = 3;  // UTF-8 byte order mark
  // Binary junk: a control byte other than tab, CR, LF in the first 64 KiB.
  const std::size_t probe = std::min(text.size(), std::size_t{1} << 16);
  for (std::size_t i = start; i < probe; ++i) {
    const unsigned char c = static_cast<unsigned char>(text[i]);
    if (c < 0x20 && c != '\t' && c != '\r' && c != '\n') {
      throw Error(position_at(text, i, name), "expected text, found binary data (" + printable_char(text[i]) + ")");
    }
  }
  if (trim(text.substr(start)).find_first_not_of("\r\n\t ") == std::string_view::npos) {
    throw Error(SourcePosition{name, 0, 0}, "empty file, expected a time column and a value column");
  }

  // Header lines: everything before the first line whose first cell is a number.
  std::vector<std::string_view> header_lines;
  std::vector<std::size_t> header_line_numbers;
  std::size_t first_header_line = 0;
  std::size_t pos = start;
  std::size_t line_number = 1;
  std::string_view first_data;
  while (true) {
    if (pos >= text.size()) {
      throw Error(SourcePosition{name, static_cast<int>(line_number), 1},
                  "expected a data line (time and value), found the end of the file");
    }
    const std::size_t remaining = text.size() - pos;
    const void* newline = std::memchr(text.data() + pos, '\n', std::min(remaining, max_line_bytes + 1));
    if (newline == nullptr && remaining > max_line_bytes) {
      const std::size_t end_of_line = text.find('\n', pos);
      const std::size_t length = (end_of_line == std::string_view::npos ? text.size() : end_of_line + 1) - pos;
      throw Error(SourcePosition{name, static_cast<int>(line_number), 1},
                  "line of " + std::to_string(length) + " bytes, expected at most " + std::to_string(max_line_bytes) +
                      " (one sample a line)");
    }
    const std::size_t line_end = newline ? static_cast<std::size_t>(static_cast<const char*>(newline) - text.data()) : text.size();
    const std::string_view line = text.substr(pos, line_end - pos);
    const std::string_view trimmed = trim(line);
    if (starts_with_number(trimmed)) {
      first_data = line;
      break;
    }
    // A data line with quoted numbers would read as one more header line, until "found text only"
    // 1000 lines on (issue 14): refuse it at its first cell instead.
    if (starts_with_quoted_number(trimmed)) {
      const std::size_t cell_end = trimmed.find_first_of(",;\t", 1);
      throw Error(SourcePosition{name, static_cast<int>(line_number), static_cast<int>(line.find('"') + 1)},
                  "expected a number, found the quoted text " + std::string(trimmed.substr(0, cell_end)) +
                      " (a capture's numbers are read without quotes)");
    }
    if (!trimmed.empty() && trimmed.front() != '#') {
      if (header_lines.empty()) first_header_line = line_number;
      header_lines.push_back(line);
      header_line_numbers.push_back(line_number);
      if (header_lines.size() > max_header_lines) {
        throw Error(SourcePosition{name, static_cast<int>(line_number), 1},
                    "expected numeric data within the first " + std::to_string(max_header_lines) +
                        " lines, found text only");
      }
    }
    pos = line_end + 1;
    ++line_number;
  }
  capture.header_lines = line_number - 1;
  capture.first_data_line = line_number;
  const std::size_t data_start = pos;

  DelimiterMode mode = DelimiterMode::blanks;
  capture.delimiter = first_data.find('\t') != std::string_view::npos ? '\t' : ' ';
  if (first_data.find(',') != std::string_view::npos) {
    mode = DelimiterMode::comma;
    capture.delimiter = ',';
  }
  if (first_data.find(';') != std::string_view::npos) {
    mode = DelimiterMode::semicolon;
    capture.delimiter = ';';
  }

  std::vector<std::vector<std::string>> headers;
  // Header names may contain blanks ("CH2 (A)"): in a tab-separated file split them at tabs only.
  for (std::string_view line : header_lines) headers.push_back(split_header(line, mode, capture.delimiter == '\t'));
  const SourcePosition header_position{name, static_cast<int>(first_header_line), 1};
  ColumnPlan plan;
  plan.time_index = resolve_column(spec.time_column, headers, header_position, name);
  plan.value_index = resolve_column(spec.column, headers, header_position, name);
  if (plan.time_index == plan.value_index) {
    throw Error(SourcePosition{name, 0, 0}, "the value column " + spec.column.describe() + " is the time column");
  }
  plan.last_index = std::max(plan.time_index, plan.value_index);

  // Units from the header lines (the last line with enough cells names the columns).
  std::optional<double> time_unit;
  std::optional<double> value_unit;
  auto first_naming_line = headers.rend();
  for (auto it = headers.rbegin(); it != headers.rend(); ++it) {
    if (static_cast<int>(it->size()) < plan.last_index) continue;
    if (first_naming_line == headers.rend()) first_naming_line = it;
    const std::string& time_header = (*it)[static_cast<std::size_t>(plan.time_index - 1)];
    const std::string& value_header = (*it)[static_cast<std::size_t>(plan.value_index - 1)];
    if (capture.time_header.empty()) {
      capture.time_header = time_header;
      capture.value_header = value_header;
    }
    if (!time_unit) {
      try {
        time_unit = time_unit_from_header(time_header);
      } catch (const Error& error) {
        // Only the line that names the columns must name a known unit; a metadata line above it
        // ("Record Length (points)") may hold anything.
        if (it == first_naming_line) {
          const std::size_t line_index = static_cast<std::size_t>(headers.rend() - it - 1);
          const std::string_view line = header_lines[line_index];
          const std::size_t at = line.find(time_header);
          throw Error(SourcePosition{name, static_cast<int>(header_line_numbers[line_index]),
                                     at == std::string_view::npos ? 1 : static_cast<int>(at) + 1},
                      error.message());
        }
      }
    }
    if (!value_unit) value_unit = value_unit_from_header(value_header, spec.quantity);
  }
  capture.time_unit_s = time_unit.value_or(1.0);
  capture.value_unit = value_unit.value_or(1.0);

  // Data region without trailing blank lines, split at line boundaries into one chunk per thread.
  std::size_t data_end = text.size();
  while (data_end > data_start && (is_blank(text[data_end - 1]) || text[data_end - 1] == '\n' || text[data_end - 1] == '\r')) {
    --data_end;
  }
  unsigned threads = options.threads != 0 ? options.threads : std::max(1u, std::thread::hardware_concurrency());
  threads = static_cast<unsigned>(std::min<std::size_t>(threads, std::max<std::size_t>(1, (data_end - data_start) / min_chunk_bytes)));
  std::vector<std::size_t> bounds{data_start};
  for (unsigned i = 1; i < threads; ++i) {
    std::size_t cut = data_start + (data_end - data_start) * i / threads;
    const std::size_t newline = text.find('\n', std::max(cut, bounds.back()));
    cut = newline == std::string_view::npos ? data_end : std::min(newline + 1, data_end);
    if (cut > bounds.back() && cut < data_end) bounds.push_back(cut);
  }
  bounds.push_back(data_end);
  const std::size_t chunk_count = bounds.size() - 1;
  // Samples expected per byte, from the first lines: chunk 0 reserves room for the values of the
  // whole record (address space only until written), so the others are appended to it without a
  // second copy of the record. A wrong guess costs a reallocation, never a wrong result.
  double bytes_per_line = 0.0;
  {
    std::size_t at = data_start;
    int lines = 0;
    while (lines < 64 && at < data_end) {
      const std::size_t newline = text.find('\n', at);
      at = newline == std::string_view::npos ? data_end : newline + 1;
      ++lines;
    }
    bytes_per_line = static_cast<double>(std::min(at, data_end) - data_start) / std::max(lines, 1);
  }
  const auto samples_in = [&](std::size_t bytes) {
    return static_cast<std::size_t>(static_cast<double>(bytes) / std::max(bytes_per_line, 1.0) * 1.02) + 64;
  };
  const double value_factor = spec.scale * capture.value_unit;
  std::vector<ChunkResult> chunks(chunk_count);
  auto run_chunk = [&](std::size_t k) {
    try {
      const char* base = text.data();
      ChunkJob job;
      job.time_reserve = samples_in(bounds[k + 1] - bounds[k]);
      job.value_reserve = k == 0 ? samples_in(data_end - data_start) : job.time_reserve;
      job.value_factor = value_factor;
      job.release_pages = release_pages;
      const char* begin = base + bounds[k];
      const char* end = base + bounds[k + 1];
      switch (mode) {
        case DelimiterMode::comma: parse_chunk<DelimiterMode::comma>(base, begin, end, plan, job, chunks[k]); break;
        case DelimiterMode::semicolon: parse_chunk<DelimiterMode::semicolon>(base, begin, end, plan, job, chunks[k]); break;
        case DelimiterMode::blanks: parse_chunk<DelimiterMode::blanks>(base, begin, end, plan, job, chunks[k]); break;
      }
    } catch (const std::exception& e) {
      chunks[k].failure.offset = bounds[k];
      chunks[k].failure.message = std::string("cannot parse: ") + e.what();
    }
  };
  {
    std::vector<std::thread> workers;
    for (std::size_t k = 1; k < chunk_count; ++k) workers.emplace_back(run_chunk, k);
    run_chunk(0);
    for (std::thread& worker : workers) worker.join();
  }

  // Join: first failure in file order; time must also increase across chunk boundaries.
  std::size_t sample_count = 0;
  const ChunkResult* previous = nullptr;
  for (const ChunkResult& chunk : chunks) {
    if (previous != nullptr && !chunk.time.empty() && !(chunk.time.front() > previous->time.back())) {
      std::size_t offset = chunk.first_line_offset;
      while (offset < text.size() && is_blank(text[offset])) ++offset;
      throw Error(position_at(text, offset, name), "expected a time after the previous line's " +
                                                       format_number(previous->time.back()) + ", found " +
                                                       format_number(chunk.time.front()));
    }
    if (chunk.failure.offset != std::string_view::npos) {
      throw Error(position_at(text, chunk.failure.offset, name), chunk.failure.message);
    }
    sample_count += chunk.time.size();
    if (!chunk.time.empty()) previous = &chunk;
  }
  if (sample_count < 2) {
    // At the one data line (issue 14: the message had no position).
    throw Error(SourcePosition{name, static_cast<int>(capture.first_data_line), 1},
                "expected at least 2 samples, found " + std::to_string(sample_count));
  }
  if (options.on_sample_count) options.on_sample_count(sample_count);

  // Uniform sampling: every time stamp within the tolerance of t0 + i·dt. The tolerance also
  // allows for the rounding of the printed time (one unit of the last printed digit).
  const double t_first = chunks.front().time.front();
  const double t_last = previous->time.back();
  const double interval = (t_last - t_first) / static_cast<double>(sample_count - 1);
  // The printed resolution: the finest among the last 16 time cells (a cell printed in shortest
  // form, "5e-06", hides its precision; one of 16 consecutive stamps shows all its digits).
  auto time_cell_of = [&](std::string_view line) {
    std::vector<std::string> cells = split_header(line, mode, false);
    return static_cast<int>(cells.size()) >= plan.time_index ? cells[static_cast<std::size_t>(plan.time_index - 1)] : std::string();
  };
  double resolution = HUGE_VAL;
  {
    std::size_t line_end = data_end;
    for (int count = 0; count < 16 && line_end > data_start; ++count) {
      const std::size_t newline = text.rfind('\n', line_end - 1);
      const std::size_t line_begin = (newline == std::string_view::npos || newline < data_start) ? data_start : newline + 1;
      resolution = std::min(resolution, decimal_resolution(time_cell_of(text.substr(line_begin, line_end - line_begin))));
      if (line_begin == data_start) break;
      line_end = line_begin - 1;
    }
  }
  SamplingReport& sampling = capture.sampling;
  sampling.tolerance_s = std::max(uniform_tolerance_intervals * interval, resolution * 1.000001) * capture.time_unit_s;
  std::size_t index = 0;
  std::size_t worst_index = 0;
  double worst = 0.0;
  for (const ChunkResult& chunk : chunks) {
    for (const double t : chunk.time) {
      const double deviation = std::abs(t - (t_first + static_cast<double>(index) * interval));
      if (deviation > worst) {
        worst = deviation;
        worst_index = index;
      }
      ++index;
    }
  }
  sampling.interval_s = interval * capture.time_unit_s;
  sampling.max_deviation_s = worst * capture.time_unit_s;
  sampling.worst_line = capture.first_data_line + worst_index;
  sampling.uniform = sampling.max_deviation_s <= sampling.tolerance_s;
  if (!sampling.uniform && !spec.resample) {
    throw Error(SourcePosition{name, static_cast<int>(sampling.worst_line), 1},
                "non-uniform sampling: time is " + format_quantity(sampling.max_deviation_s, Dimension::time) +
                    " off the uniform grid of " + format_quantity(sampling.interval_s, Dimension::time) +
                    " steps (tolerance " + format_quantity(sampling.tolerance_s, Dimension::time) +
                    "); set resample = true (--resample) to resample it");
  }

  // A sample interval under a femtosecond is no instrument's (a subnormal time step would make
  // the sample rate infinite downstream).
  if (!(sampling.interval_s >= 1e-15) || !std::isfinite(1.0 / sampling.interval_s)) {
    char interval_text[32];
    std::snprintf(interval_text, sizeof interval_text, "%.3g s", sampling.interval_s);
    throw Error(SourcePosition{name, static_cast<int>(capture.first_data_line + 1), 1},
                std::string("sample interval of ") + interval_text + " is below 1 fs: check the time column and its unit");
  }
  Waveform& waveform = capture.waveform;
  waveform.quantity = spec.quantity;
  waveform.start_time_s = t_first * capture.time_unit_s;
  waveform.sample_rate_hz = 1.0 / sampling.interval_s;
  if (sampling.uniform) {
    // The time stamps have done their job; the values of chunk 0 become the record and the other
    // chunks are appended to it one by one, each freed once copied.
    for (ChunkResult& chunk : chunks) std::vector<double>().swap(chunk.time);
    waveform.samples = std::move(chunks.front().value);
    waveform.samples.reserve(sample_count);
    for (std::size_t k = 1; k < chunks.size(); ++k) {
      waveform.samples.insert(waveform.samples.end(), chunks[k].value.begin(), chunks[k].value.end());
      std::vector<double>().swap(chunks[k].value);
    }
  } else {
    // Linear interpolation onto the uniform grid of the same length and span, walking the chunks
    // in file order (no concatenated copy of the time stamps and values).
    waveform.samples.resize(sample_count);
    std::size_t k = 0;  // chunk of sample j
    std::size_t j = 0;  // index in chunk k: the grid point lies in [sample j, its successor]
    while (chunks[k].time.empty()) ++k;
    // The sample after (k, j): the next one in the chunk, else the first of the next non-empty chunk.
    const auto successor = [&](std::size_t chunk, std::size_t index) {
      if (index + 1 < chunks[chunk].time.size()) return std::pair{chunk, index + 1};
      do ++chunk; while (chunks[chunk].time.empty());
      return std::pair{chunk, std::size_t{0}};
    };
    for (std::size_t i = 0; i < sample_count; ++i) {
      const double t = i + 1 == sample_count ? t_last : t_first + static_cast<double>(i) * interval;
      auto [next_chunk, next_index] = successor(k, j);
      // Advance while the successor is at or before t and is not the record's last sample (the
      // interval [second to last, last] serves the end of the grid).
      while (chunks[next_chunk].time[next_index] <= t &&
             !(&chunks[next_chunk] == previous && next_index + 1 == previous->time.size())) {
        k = next_chunk;
        j = next_index;
        std::tie(next_chunk, next_index) = successor(k, j);
      }
      const double t0 = chunks[k].time[j];
      const double t1 = chunks[next_chunk].time[next_index];
      const double v0 = chunks[k].value[j];
      const double v1 = chunks[next_chunk].value[next_index];
      const double u = std::clamp((t - t0) / (t1 - t0), 0.0, 1.0);
      waveform.samples[i] = v0 + u * (v1 - v0);
    }
    sampling.resampled = true;
  }
  return capture;
}

}  // namespace

Capture parse_capture_text(std::string_view text, const std::string& name, const CaptureSpec& spec,
                           const CaptureLoadOptions& options) {
  return parse_capture(text, name, spec, options, false);
}

Capture load_capture(const CaptureSpec& spec, const CaptureLoadOptions& options) {
  const MappedFile mapped(spec.file);
  return parse_capture(mapped.text(), spec.file, spec, options, mapped.release_pages());
}

void check_capture_covers_period(const Capture& capture, double fundamental_hz) {
  check_capture_covers_period(capture.file, capture.waveform.duration_s(), fundamental_hz);
}

void check_capture_covers_period(const std::string& file, double duration_s, double fundamental_hz) {
  if (!(fundamental_hz > 0.0) || !std::isfinite(fundamental_hz)) {
    throw Error("expected a positive fundamental frequency, found " + format_number(fundamental_hz));
  }
  const double period_s = 1.0 / fundamental_hz;
  if (duration_s < period_s * (1.0 - 1e-9)) {
    throw Error("capture '" + file + "' covers " + format_quantity(duration_s, Dimension::time) +
                ", fewer than one period of the fundamental (" + format_quantity(fundamental_hz, Dimension::frequency) +
                ", " + format_quantity(period_s, Dimension::time) + ")");
  }
}

CaptureSpec read_capture_section(TableReader& reader) {
  CaptureSpec spec;
  spec.where = reader.table_position();
  const std::string file = reader.required_string("file");
  std::filesystem::path path(file);
  if (path.is_relative()) path = std::filesystem::path(reader.file()).parent_path() / path;
  spec.file = path.string();
  auto read_column = [&](std::string_view key, ColumnChoice fallback) {
    const toml::node* node = reader.node(key);
    if (node == nullptr) return fallback;
    if (const auto* integer = node->as_integer()) {
      if (integer->get() < 1 || integer->get() > 1000000) {
        reader.fail(key, "expected a column number of 1 or more, found " + std::to_string(integer->get()));
      }
      return ColumnChoice::by_index(static_cast<int>(integer->get()));
    }
    if (const auto* text = node->as_string()) {
      if (text->get().empty()) reader.fail(key, "expected a column number or a header name, found \"\"");
      return ColumnChoice::by_name(text->get());
    }
    reader.fail(key, "expected a column number or a header name");
  };
  spec.time_column = read_column("time_column", ColumnChoice::by_index(1));
  spec.column = read_column("column", ColumnChoice::by_index(2));
  if (const auto scale = reader.optional_quantity("scale", Dimension::number)) {
    if (*scale == 0.0 || !std::isfinite(*scale)) reader.fail("scale", "expected a finite, non-zero scale, found " + format_number(*scale));
    spec.scale = *scale;
  }
  if (const auto quantity = reader.optional_choice("quantity", {"voltage", "current"})) {
    spec.quantity = *quantity == "current" ? Quantity::current : Quantity::voltage;
  }
  if (const auto frequency = reader.optional_quantity("frequency", Dimension::frequency)) {
    if (!(*frequency > 0.0)) reader.fail("frequency", "expected a positive switching frequency, found " + format_number(*frequency));
    spec.switching_frequency_hz = *frequency;
  }
  spec.resample = reader.optional_bool("resample").value_or(false);
  if (reader.has("current_column")) {
    // Both paths from one record: the value column is then the switch-node voltage.
    if (spec.quantity != Quantity::voltage) {
      reader.fail("current_column", "'current_column' needs quantity = \"voltage\" (the value column is then the "
                                    "switch-node voltage), found quantity = \"current\"");
    }
    spec.current_column = read_column("current_column", ColumnChoice::by_index(3));
    if (const auto scale = reader.optional_quantity("current_scale", Dimension::number)) {
      if (*scale == 0.0 || !std::isfinite(*scale)) {
        reader.fail("current_scale", "expected a finite, non-zero scale, found " + format_number(*scale));
      }
      spec.current_scale = *scale;
    }
  } else if (reader.has("current_scale")) {
    reader.fail("current_scale", "'current_scale' needs 'current_column'");
  }
  reader.finish({"file", "column", "time_column", "scale", "quantity", "frequency", "resample", "current_column",
                 "current_scale"});
  return spec;
}

CaptureSpec current_capture_spec(const CaptureSpec& spec) {
  if (!spec.current_column) throw Error("expected a capture with a current column");
  CaptureSpec current = spec;
  current.column = *spec.current_column;
  current.scale = spec.current_scale;
  current.quantity = Quantity::current;
  current.current_column.reset();
  current.current_scale = 1.0;
  return current;
}

}  // namespace spurcast

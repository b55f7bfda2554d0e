#include "core/compliance/trace.hpp"

#include <fast_float/fast_float.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstring>
#include <fstream>
#include <sstream>

#include "core/input/error.hpp"
#include "core/input/input_file.hpp"
#include "core/input/units.hpp"

namespace spurcast {

namespace {

struct CsvField {
  std::string text;
  int column = 0;  // 1-based column of the field's first character
};

struct CsvRow {
  int line = 0;
  std::vector<CsvField> fields;
};

/// A regular file only (a FIFO or /dev/zero would never end), of a bounded size (input_file.hpp).
std::string read_file(const std::string& path, const std::string& what) {
  return read_input_file(path, what, max_csv_file_bytes);
}

// Whether c is one of the characters of `set` (never the NUL that ends it).
bool is_one_of(char c, const char* set) { return c != '\0' && std::strchr(set, c) != nullptr; }

// The lines of a CSV text that carry data: not blank, not a '#' comment; CR and a UTF-8 BOM removed.
struct TextLine {
  int number = 0;
  std::string_view text;
};

std::vector<TextLine> data_lines(std::string_view text) {
  std::vector<TextLine> lines;
  int line_number = 0;
  std::size_t start = 0;
  while (start <= text.size()) {
    std::size_t end = text.find('\n', start);
    if (end == std::string_view::npos) end = text.size();
    std::string_view line = text.substr(start, end - start);
    ++line_number;
    start = end + 1;
    if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
    if (line_number == 1 && line.substr(0, 3) == "\xEF\xBB\xBF") line.remove_prefix(3);  // UTF-8 BOM
    const std::size_t first = line.find_first_not_of(" \t");
    if (first != std::string_view::npos && line[first] != '#') lines.push_back(TextLine{line_number, line});
    if (end == text.size()) break;
  }
  return lines;
}

// One delimiter per file: ';' if any line has one, else a tab if any line has one, else ','. A
// semicolon or tab file may then use the decimal comma (the European export setting), which a
// comma file cannot.
char file_delimiter(const std::vector<TextLine>& lines) {
  // Judged on the lines that start like a number, so that metadata lines before the header
  // ("Date;2024-05-01" in a comma file) do not decide; on every line when none does.
  std::vector<TextLine> numeric;
  for (const TextLine& line : lines) {
    const std::size_t first = line.text.find_first_not_of(" \t\"");
    if (first != std::string_view::npos && is_one_of(line.text[first], "0123456789+-.")) {
      numeric.push_back(line);
    }
  }
  bool tab = false;
  for (const TextLine& line : numeric.empty() ? lines : numeric) {
    if (line.text.find(';') != std::string_view::npos) return ';';
    if (line.text.find('\t') != std::string_view::npos) tab = true;
  }
  return tab ? '\t' : ',';
}

// Splits at `delimiter`; a field in double quotes may hold the delimiter ("60,45" in a comma file).
std::vector<CsvRow> split_csv(const std::vector<TextLine>& lines, char delimiter) {
  std::vector<CsvRow> rows;
  rows.reserve(lines.size());
  for (const TextLine& text_line : lines) {
    const std::string_view line = text_line.text;
    CsvRow row;
    row.line = text_line.number;
    std::size_t field_start = 0;
    while (true) {
      const char* const blanks = delimiter == '\t' ? " " : " \t";
      std::size_t offset = field_start;
      while (offset < line.size() && is_one_of(line[offset], blanks)) ++offset;
      std::size_t field_end = line.find(delimiter, offset);
      std::string_view field;
      if (offset < line.size() && line[offset] == '"') {
        const std::size_t close = line.find('"', offset + 1);
        const std::size_t after = close == std::string_view::npos ? close : line.find_first_not_of(blanks, close + 1);
        if (close != std::string_view::npos && (after == std::string_view::npos || line[after] == delimiter)) {
          field = line.substr(offset + 1, close - offset - 1);
          ++offset;
          field_end = after;
        }
      }
      if (field.data() == nullptr) {
        field = line.substr(offset, field_end == std::string_view::npos ? std::string_view::npos : field_end - offset);
        while (!field.empty() && is_one_of(field.back(), blanks)) field.remove_suffix(1);
      }
      row.fields.push_back(CsvField{std::string(field), static_cast<int>(offset) + 1});
      if (field_end == std::string_view::npos) break;
      field_start = field_end + 1;
    }
    rows.push_back(std::move(row));
  }
  return rows;
}

std::optional<double> to_number(std::string_view text) {
  double value = 0.0;
  const char* first = text.data();
  const char* last = first + text.size();
  if (first != last && *first == '+') ++first;
  const auto result = fast_float::from_chars(first, last, value);
  if (result.ec != std::errc() || result.ptr != last || !std::isfinite(value)) return std::nullopt;
  return value;
}

// A cell as a number. With ';' or tab between the fields, one ',' and no '.' is a decimal comma
// ("60,45" = 60.45). With ',' between the fields a cell can hold a comma only in quotes, and
// "1,234" could be 1.234 or 1234: refused rather than guessed.
std::optional<double> cell_number(const std::string& text, char delimiter, const SourcePosition& where) {
  const std::size_t comma = text.find(',');
  if (comma == std::string::npos) return to_number(text);
  if (delimiter == ',') {
    throw Error(where, "expected a number with a decimal point, found \"" + text +
                           "\" (a decimal comma is ambiguous in a comma-separated file: use '.', or ';' or tab "
                           "between the fields)");
  }
  if (text.find(',', comma + 1) != std::string::npos || text.find('.') != std::string::npos) return std::nullopt;
  std::string decimal = text;
  decimal[comma] = '.';
  return to_number(decimal);
}

std::string lower(std::string text) {
  for (char& c : text) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return text;
}

// Lower case with every spelling of the micro sign as 'u': U+00B5 and U+03BC in UTF-8, and the
// Windows-1252 / Latin-1 byte 0xB5.
std::string normalise_unit_text(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  for (std::size_t i = 0; i < text.size(); ++i) {
    const unsigned char c = static_cast<unsigned char>(text[i]);
    if ((c == 0xC2 || c == 0xCE) && i + 1 < text.size() &&
        static_cast<unsigned char>(text[i + 1]) == (c == 0xC2 ? 0xB5 : 0xBC)) {
      out += 'u';
      ++i;
    } else if (c == 0xB5) {
      out += 'u';
    } else {
      out += static_cast<char>(std::tolower(c));
    }
  }
  return out;
}

// The unit a header names. `bracketed`: the text inside the last (...) or [...] (a unit for certain);
// otherwise the header's last word after '_', ' ' or '/' (a unit only if it looks like one).
struct HeaderUnit {
  std::string text;  // as written
  bool bracketed = false;
};

HeaderUnit header_unit(std::string_view header) {
  const auto trim = [](std::string_view s) {
    while (!s.empty() && (s.front() == ' ' || s.front() == '\t')) s.remove_prefix(1);
    while (!s.empty() && (s.back() == ' ' || s.back() == '\t')) s.remove_suffix(1);
    return s;
  };
  header = trim(header);
  for (const auto& [open, close] : {std::pair{'(', ')'}, std::pair{'[', ']'}}) {
    const std::size_t c = header.rfind(close);
    if (c == std::string_view::npos) continue;
    const std::size_t o = header.rfind(open, c);
    if (o != std::string_view::npos) return HeaderUnit{std::string(trim(header.substr(o + 1, c - o - 1))), true};
  }
  // "Level/dBuV/m" and "level dBuV/m": the field unit's own '/' is not a separator.
  const std::string low = normalise_unit_text(header);
  std::size_t end = header.size();
  if (low.size() >= 6 && low.compare(low.size() - 6, 6, "dbuv/m") == 0) end = header.rfind('/');
  const std::size_t cut = header.substr(0, end).find_last_of("_ /");
  return HeaderUnit{std::string(cut == std::string_view::npos ? header : trim(header.substr(cut + 1))), false};
}

struct NumericTable {
  std::string file;
  char delimiter = ',';
  std::optional<double> rbw_hz;  // [Hz] from the metadata lines, when given
  SourcePosition rbw_where;
  std::vector<CsvField> header;
  int header_line = 0;
  std::vector<CsvRow> rows;
};

// A comma file whose row has more filled fields than the header (or than the first row without a
// header) most likely carries decimal commas ("150000,60,45"): refused at the first extra field.
void check_comma_row_widths(const NumericTable& table) {
  if (table.delimiter != ',' || table.rows.empty()) return;
  const std::size_t width = table.header.empty() ? table.rows.front().fields.size() : table.header.size();
  for (const CsvRow& row : table.rows) {
    for (std::size_t i = width; i < row.fields.size(); ++i) {
      if (row.fields[i].text.empty()) continue;
      throw Error(SourcePosition{table.file, row.line, row.fields[i].column},
                  "expected " + std::to_string(width) + " fields as in " +
                      (table.header.empty() ? std::string("the first row") : std::string("the header")) + ", found " +
                      std::to_string(row.fields.size()) +
                      " (a decimal comma is ambiguous in a comma-separated file: use '.', or ';' or tab between "
                      "the fields)");
    }
  }
}

// The scale of a frequency unit ("Hz", "kHz", "MHz", "GHz", any case) to Hz.
std::optional<double> frequency_unit_scale(const std::string& unit) {
  const std::string low = normalise_unit_text(unit);
  if (low == "hz") return 1.0;
  if (low == "khz") return 1e3;
  if (low == "mhz") return 1e6;
  if (low == "ghz") return 1e9;
  return std::nullopt;
}

bool is_rbw_label(const std::string& label) {
  const std::string low = normalise_unit_text(label);
  for (const char* name : {"rbw", "res bw", "res. bw", "resbw", "resolution bandwidth", "resolution bw"}) {
    if (low.rfind(name, 0) == 0) return true;
  }
  return false;
}

// The resolution bandwidth of a metadata row "RBW;9000;Hz", "RBW [kHz];9", "RBW;9 kHz" (no unit: Hz).
void read_rbw(const CsvRow& row, NumericTable& table) {
  if (row.fields.size() < 2 || !is_rbw_label(row.fields[0].text)) return;
  const CsvField& cell = row.fields[1];
  const SourcePosition where{table.file, row.line, cell.column};
  std::string number_text = cell.text;
  std::string unit_text;
  SourcePosition unit_where = where;
  const std::size_t letter = cell.text.find_first_of("abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ");
  if (letter != std::string::npos && letter > 0 && !cell_number(cell.text, table.delimiter, where)) {
    number_text = cell.text.substr(0, cell.text.find_last_not_of(' ', letter - 1) + 1);
    unit_text = cell.text.substr(letter);
  } else if (row.fields.size() >= 3 && !row.fields[2].text.empty()) {
    unit_text = row.fields[2].text;
    unit_where = SourcePosition{table.file, row.line, row.fields[2].column};
  } else if (const HeaderUnit label = header_unit(row.fields[0].text); label.bracketed) {
    unit_text = label.text;
    unit_where = SourcePosition{table.file, row.line, row.fields[0].column};
  }
  const auto value = cell_number(number_text, table.delimiter, where);
  if (!value || !(*value > 0.0)) throw Error(where, "expected a positive resolution bandwidth, found \"" + cell.text + "\"");
  const auto scale = unit_text.empty() ? std::optional<double>(1.0) : frequency_unit_scale(unit_text);
  if (!scale) throw Error(unit_where, "expected a bandwidth unit (Hz, kHz or MHz), found \"" + unit_text + "\"");
  table.rbw_hz = *value * *scale;
  table.rbw_where = where;
}

// Instrument exports put metadata lines before the table ("Type;Analyzer", "RBW;9000;Hz", blank
// lines, then "Frequency [Hz];Level [dBuV]"). The rule: the data are the rows from the first row
// whose first field is a number; the row just before it, if any, is the header; every row before
// the header is metadata, read only for the resolution bandwidth. A file without metadata is the
// same rule with nothing before the header.
NumericTable split_table(std::string_view text, const std::string& name) {
  NumericTable table;
  table.file = name;
  const std::vector<TextLine> lines = data_lines(text);
  table.delimiter = file_delimiter(lines);
  std::vector<CsvRow> rows = split_csv(lines, table.delimiter);
  std::size_t first_data = 0;
  while (first_data < rows.size()) {
    const CsvField& first = rows[first_data].fields.front();
    // A quoted label with a comma ("Date, time") is metadata, not an ambiguous number.
    const bool comma_label = table.delimiter == ',' && first.text.find(',') != std::string::npos;
    if (!comma_label && cell_number(first.text, table.delimiter, SourcePosition{name, rows[first_data].line, first.column})) {
      break;
    }
    ++first_data;
  }
  if (first_data == rows.size()) throw Error(SourcePosition{name, 0, 0}, "expected rows of numbers, found none");
  if (first_data > 0) {
    table.header = rows[first_data - 1].fields;
    table.header_line = rows[first_data - 1].line;
    for (std::size_t i = 0; i + 1 < first_data; ++i) read_rbw(rows[i], table);
  }
  table.rows.assign(rows.begin() + static_cast<std::ptrdiff_t>(first_data), rows.end());
  check_comma_row_widths(table);
  return table;
}

double field_number(const NumericTable& table, const CsvRow& row, std::size_t index) {
  if (index >= row.fields.size()) {
    throw Error(SourcePosition{table.file, row.line, 0},
                "expected at least " + std::to_string(index + 1) + " columns, found " + std::to_string(row.fields.size()));
  }
  const CsvField& field = row.fields[index];
  const SourcePosition where{table.file, row.line, field.column};
  const auto value = cell_number(field.text, table.delimiter, where);
  if (!value) throw Error(where, "expected a number, found \"" + field.text + "\"");
  return *value;
}

// Frequencies an EMC measurement can hold: 9 kHz, the bottom of CISPR band A (docs/references.md
// §1.1), to 18 GHz, the top of CISPR 16-1-1 band E (from memory). Used only to tell whether a
// frequency column without a unit can be anything but Hz.
constexpr double plausible_low_hz = 9e3;
constexpr double plausible_high_hz = 18e9;

std::string plain_number(double value) {
  std::ostringstream out;
  out << value;
  return out.str();
}

// A frequency column without a unit is read as Hz only when no other unit could be meant: Hz puts
// every value within the plausible span and kHz, MHz and GHz do not. "0.15 ... 30" (MHz) and
// "1e6 ... 2e6" (Hz or kHz) are refused, so a MHz table is never read as Hz.
void check_unitless_frequencies(const std::vector<double>& values, const SourcePosition& where,
                                const std::string& header) {
  const std::pair<const char*, double> units[] = {{"Hz", 1.0}, {"kHz", 1e3}, {"MHz", 1e6}, {"GHz", 1e9}};
  std::vector<std::string> fits;
  for (const auto& [unit, scale] : units) {
    if (values.front() * scale >= plausible_low_hz && values.back() * scale <= plausible_high_hz) fits.push_back(unit);
  }
  if (fits.size() == 1 && fits.front() == "Hz") return;
  const std::string example = "\"Frequency (" + (fits.size() == 1 ? fits.front() : std::string("Hz")) + ")\"";
  std::string message = header.empty() ? "expected a header naming the frequency unit, e.g. " + example
                                        : "expected a unit in the frequency header, e.g. " + example + ", found \"" +
                                              header + "\"";
  message += ": the values " + plain_number(values.front()) + " to " + plain_number(values.back());
  if (fits.empty()) {
    message += " lie outside 9 kHz to 18 GHz as Hz, kHz, MHz and GHz";
  } else {
    message += " could be ";
    for (std::size_t i = 0; i < fits.size(); ++i) message += (i == 0 ? "" : i + 1 == fits.size() ? " or " : ", ") + fits[i];
  }
  throw Error(where, message);
}

// Reads the frequency column, scaled by the unit its header names ("Frequency (MHz)", "Freq [kHz]",
// "frequency_hz"), and checks it increases strictly and is positive. An unknown unit in brackets is
// refused at the header cell; a column without a unit must be unambiguous as Hz.
std::vector<double> frequency_column(const NumericTable& table, std::size_t index) {
  std::optional<double> scale;
  std::string header;
  SourcePosition unit_where{table.file, table.rows.front().line, 1};
  if (index < table.header.size()) {
    header = table.header[index].text;
    unit_where = SourcePosition{table.file, table.header_line, table.header[index].column};
    const HeaderUnit unit = header_unit(header);
    scale = frequency_unit_scale(unit.text);
    if (!scale && unit.bracketed) {
      throw Error(unit_where, "expected a frequency unit (Hz, kHz, MHz or GHz), found \"" + unit.text + "\"");
    }
  } else if (index < table.rows.front().fields.size()) {
    unit_where.column = table.rows.front().fields[index].column;
  }
  std::vector<double> frequencies;
  frequencies.reserve(table.rows.size());
  for (const CsvRow& row : table.rows) {
    const double f = field_number(table, row, index) * scale.value_or(1.0);
    const SourcePosition where{table.file, row.line, row.fields[index].column};
    if (!(f > 0.0)) throw Error(where, "expected a positive frequency, found " + row.fields[index].text);
    if (!std::isfinite(f)) throw Error(where, "expected a finite frequency in Hz, found " + row.fields[index].text);
    if (!frequencies.empty() && !(f > frequencies.back())) {
      throw Error(where, "frequencies out of order: expected above " +
                             format_quantity(frequencies.back(), Dimension::frequency, 6) + ", found " +
                             format_quantity(f, Dimension::frequency, 6));
    }
    frequencies.push_back(f);
  }
  if (!scale) check_unitless_frequencies(frequencies, unit_where, header);
  return frequencies;
}

std::size_t find_frequency_column(const NumericTable& table) {
  for (std::size_t i = 0; i < table.header.size(); ++i) {
    if (lower(table.header[i].text).rfind("freq", 0) == 0) return i;
  }
  return 0;
}

std::optional<TraceUnit> level_unit_token(const std::string& text) {
  const std::string low = normalise_unit_text(text);
  if (low == "dbuv") return TraceUnit::dbuv;
  if (low == "dbmv") return TraceUnit::dbmv;
  if (low == "dbm") return TraceUnit::dbm;
  if (low == "dbua") return TraceUnit::dbua;
  if (low == "dbuv/m" || low == "dbuvm" || low == "dbuv_m") return TraceUnit::dbuvm;
  return std::nullopt;
}

const char* const level_units_text = "dBuV, dBmV, dBm, dBuA or dBuV/m";

// The level unit a header names; nullopt when it names none. A unit in brackets, or a last word
// starting with "dB", that is not a level unit is refused at the header cell.
std::optional<TraceUnit> unit_named_in(const CsvField& header, const SourcePosition& where) {
  const HeaderUnit unit = header_unit(header.text);
  if (const auto known = level_unit_token(unit.text)) return known;
  if (unit.bracketed || normalise_unit_text(unit.text).rfind("db", 0) == 0) {
    throw Error(where, std::string("expected a level unit (") + level_units_text + "), found \"" + unit.text + "\"");
  }
  return std::nullopt;
}

// Linear interpolation in log10(f) of y over strictly increasing x, held at the ends.
double interpolate_log_f(const std::vector<double>& x_hz, const std::vector<double>& y, double f_hz) {
  if (f_hz <= x_hz.front()) return y.front();
  if (f_hz >= x_hz.back()) return y.back();
  const auto upper = std::upper_bound(x_hz.begin(), x_hz.end(), f_hz);
  const std::size_t i = static_cast<std::size_t>(upper - x_hz.begin());
  const double t = std::log10(f_hz / x_hz[i - 1]) / std::log10(x_hz[i] / x_hz[i - 1]);
  return y[i - 1] + t * (y[i] - y[i - 1]);
}

}  // namespace

std::string to_string(TraceUnit unit) {
  switch (unit) {
    case TraceUnit::dbuv: return "dBuV";
    case TraceUnit::dbmv: return "dBmV";
    case TraceUnit::dbm: return "dBm";
    case TraceUnit::dbua: return "dBuA";
    case TraceUnit::dbuvm: return "dBuV/m";
  }
  return "dBuV";
}

TraceUnit trace_unit_from_string(std::string_view text) {
  if (const auto unit = level_unit_token(std::string(text))) return *unit;
  throw Error(std::string("expected ") + level_units_text + ", found \"" + std::string(text) + "\"");
}

LimitQuantity trace_quantity(TraceUnit unit) {
  switch (unit) {
    case TraceUnit::dbuv:
    case TraceUnit::dbmv:
    case TraceUnit::dbm: return LimitQuantity::conducted_voltage;
    case TraceUnit::dbua: return LimitQuantity::conducted_current;
    case TraceUnit::dbuvm: return LimitQuantity::radiated_field;
  }
  return LimitQuantity::conducted_voltage;
}

std::string describe_conversion(TraceUnit unit) {
  switch (unit) {
    case TraceUnit::dbmv: return "dBmV converted to dBuV (+60 dB)";
    case TraceUnit::dbm: return "dBm converted for 50 ohm (+106.99 dB)";
    default: return to_string(unit);
  }
}

namespace {

// A level in `unit` in the trace's base unit: dBµV for voltages, else unchanged.
double to_base_unit(double level, TraceUnit unit) {
  switch (unit) {
    case TraceUnit::dbmv: return level + 60.0;             // 20·log10(1 mV / 1 µV), common practice
    case TraceUnit::dbm: return dbm_to_dbuv_50ohm(level);  // docs/references.md §9.2 [D]
    default: return level;
  }
}

}  // namespace

MeasuredTrace parse_trace_csv(std::string_view text, const std::string& name, std::optional<TraceUnit> unit,
                              const std::string& level_column) {
  const NumericTable table = split_table(text, name);
  const std::size_t frequency_index = find_frequency_column(table);
  std::size_t level_index = frequency_index == 0 ? 1 : 0;
  if (!level_column.empty()) {
    const auto found = std::find_if(table.header.begin(), table.header.end(),
                                    [&](const CsvField& f) { return f.text == level_column; });
    if (found == table.header.end()) {
      throw Error(SourcePosition{name, table.header_line, 0},
                  "expected a column named \"" + level_column + "\", found none");
    }
    level_index = static_cast<std::size_t>(found - table.header.begin());
  }
  MeasuredTrace trace;
  trace.file = name;
  trace.unit_where = SourcePosition{name, 0, 0};
  std::optional<TraceUnit> named;
  if (level_index < table.header.size()) {
    trace.level_column = table.header[level_index].text;
    trace.unit_where = SourcePosition{name, table.header_line, table.header[level_index].column};
    named = unit_named_in(table.header[level_index], trace.unit_where);
  }
  if (unit && named && *unit != *named) {
    throw Error(trace.unit_where, "the level column \"" + trace.level_column + "\" is in " + to_string(*named) +
                                      ", but the unit given is " + to_string(*unit));
  }
  trace.unit = unit ? *unit : named.value_or(TraceUnit::dbuv);
  trace.quantity = trace_quantity(trace.unit);
  trace.rbw_hz = table.rbw_hz;
  trace.rbw_where = table.rbw_where;
  trace.frequency_hz = frequency_column(table, frequency_index);
  trace.level_dbuv.reserve(table.rows.size());
  for (const CsvRow& row : table.rows) trace.level_dbuv.push_back(to_base_unit(field_number(table, row, level_index), trace.unit));
  if (trace.frequency_hz.size() < 2) {
    throw Error(SourcePosition{name, 0, 0}, "expected at least 2 trace points, found " +
                                                std::to_string(trace.frequency_hz.size()));
  }
  return trace;
}

MeasuredTrace read_trace_csv(const std::string& path, std::optional<TraceUnit> unit, const std::string& level_column) {
  return parse_trace_csv(read_file(path, "trace file"), path, unit, level_column);
}

double CorrectionTable::at(double f_hz) const {
  if (frequency_hz.empty()) return 0.0;
  return interpolate_log_f(frequency_hz, correction_db, f_hz);
}

bool CorrectionTable::covers(double f_hz) const {
  return !frequency_hz.empty() && f_hz >= frequency_hz.front() && f_hz <= frequency_hz.back();
}

CorrectionTable parse_correction_csv(std::string_view text, const std::string& name) {
  const NumericTable table = split_table(text, name);
  const std::size_t frequency_index = find_frequency_column(table);
  const std::size_t value_index = frequency_index == 0 ? 1 : 0;
  CorrectionTable correction;
  correction.file = name;
  correction.frequency_hz = frequency_column(table, frequency_index);
  for (const CsvRow& row : table.rows) correction.correction_db.push_back(field_number(table, row, value_index));
  return correction;
}

CorrectionTable read_correction_csv(const std::string& path) { return parse_correction_csv(read_file(path, "correction table"), path); }

MeasuredTrace apply_corrections(MeasuredTrace trace, const std::vector<CorrectionTable>& tables) {
  for (std::size_t i = 0; i < trace.frequency_hz.size(); ++i) {
    for (const CorrectionTable& table : tables) trace.level_dbuv[i] += table.at(trace.frequency_hz[i]);
  }
  return trace;
}

std::vector<LevelReading> trace_readings(const MeasuredTrace& trace, Detector detector) {
  std::vector<LevelReading> readings;
  readings.reserve(trace.frequency_hz.size());
  for (std::size_t i = 0; i < trace.frequency_hz.size(); ++i) {
    readings.push_back(LevelReading{trace.frequency_hz[i], detector, trace.level_dbuv[i]});
  }
  return readings;
}

double ScanCsvRow::level_db(Detector detector) const {
  switch (detector) {
    case Detector::peak: return peak_dbuv;
    case Detector::quasi_peak: return quasi_peak_dbuv;
    case Detector::average: return average_dbuv;
  }
  return peak_dbuv;
}

std::vector<ScanCsvRow> parse_scan_csv(std::string_view text, const std::string& name) {
  const NumericTable table = split_table(text, name);
  if (table.header.empty()) {
    throw Error(SourcePosition{name, table.rows.front().line, 1},
                "expected the header frequency_hz,peak_dbuv,quasi_peak_dbuv,average_dbuv, found numbers");
  }
  const auto column = [&](const std::string& wanted) -> std::optional<std::size_t> {
    for (std::size_t i = 0; i < table.header.size(); ++i) {
      if (table.header[i].text == wanted) return i;
    }
    return std::nullopt;
  };
  const auto frequency_index = column("frequency_hz");
  if (!frequency_index) {
    throw Error(SourcePosition{name, table.header_line, 1}, "expected a column named \"frequency_hz\", found none");
  }
  const auto peak = column("peak_dbuv");
  const auto quasi_peak = column("quasi_peak_dbuv");
  const auto average = column("average_dbuv");
  if (!peak && !quasi_peak && !average) {
    throw Error(SourcePosition{name, table.header_line, 1},
                "expected a column named peak_dbuv, quasi_peak_dbuv or average_dbuv, found none");
  }
  const std::vector<double> frequencies = frequency_column(table, *frequency_index);
  std::vector<ScanCsvRow> rows;
  rows.reserve(frequencies.size());
  for (std::size_t r = 0; r < table.rows.size(); ++r) {
    ScanCsvRow row;
    row.frequency_hz = frequencies[r];
    if (peak) row.peak_dbuv = field_number(table, table.rows[r], *peak);
    if (quasi_peak) row.quasi_peak_dbuv = field_number(table, table.rows[r], *quasi_peak);
    if (average) row.average_dbuv = field_number(table, table.rows[r], *average);
    rows.push_back(row);
  }
  return rows;
}

std::vector<ScanCsvRow> read_scan_csv(const std::string& path) { return parse_scan_csv(read_file(path, "scan CSV file"), path); }

}  // namespace spurcast

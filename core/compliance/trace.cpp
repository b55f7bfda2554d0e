#include "core/compliance/trace.hpp"

#include <fast_float/fast_float.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <fstream>
#include <sstream>

#include "core/input/error.hpp"
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

std::string read_file(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw Error(SourcePosition{path, 0, 0}, "cannot open file");
  std::ostringstream buffer;
  buffer << in.rdbuf();
  return buffer.str();
}

std::vector<CsvRow> split_csv(std::string_view text) {
  std::vector<CsvRow> rows;
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
    if (first == std::string_view::npos || line[first] == '#') {
      if (end == text.size()) break;
      continue;
    }
    CsvRow row;
    row.line = line_number;
    std::size_t field_start = 0;
    while (true) {
      const std::size_t field_end = line.find_first_of(",;\t", field_start);
      std::string_view field = line.substr(field_start, field_end == std::string_view::npos ? std::string_view::npos
                                                                                           : field_end - field_start);
      std::size_t offset = field_start;
      while (!field.empty() && field.front() == ' ') {
        field.remove_prefix(1);
        ++offset;
      }
      while (!field.empty() && field.back() == ' ') field.remove_suffix(1);
      if (field.size() >= 2 && field.front() == '"' && field.back() == '"') {
        field = field.substr(1, field.size() - 2);
        ++offset;
      }
      row.fields.push_back(CsvField{std::string(field), static_cast<int>(offset) + 1});
      if (field_end == std::string_view::npos) break;
      field_start = field_end + 1;
    }
    rows.push_back(std::move(row));
    if (end == text.size()) break;
  }
  return rows;
}

std::optional<double> to_number(const std::string& text) {
  double value = 0.0;
  const char* first = text.data();
  const char* last = first + text.size();
  if (first != last && *first == '+') ++first;
  const auto result = fast_float::from_chars(first, last, value);
  if (result.ec != std::errc() || result.ptr != last || !std::isfinite(value)) return std::nullopt;
  return value;
}

std::string lower(std::string text) {
  for (char& c : text) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return text;
}

double frequency_scale(const std::string& header) {
  const std::string name = lower(header);
  if (name.find("ghz") != std::string::npos) return 1e9;
  if (name.find("mhz") != std::string::npos) return 1e6;
  if (name.find("khz") != std::string::npos) return 1e3;
  return 1.0;
}

// A table of numeric columns: header (maybe empty) and rows.
struct NumericTable {
  std::string file;
  std::vector<CsvField> header;
  int header_line = 0;
  std::vector<CsvRow> rows;
};

NumericTable split_table(std::string_view text, const std::string& name) {
  NumericTable table;
  table.file = name;
  std::vector<CsvRow> rows = split_csv(text);
  std::size_t first_data = 0;
  if (!rows.empty() && !to_number(rows.front().fields.front().text)) {
    table.header = rows.front().fields;
    table.header_line = rows.front().line;
    first_data = 1;
  }
  table.rows.assign(rows.begin() + static_cast<std::ptrdiff_t>(first_data), rows.end());
  if (table.rows.empty()) throw Error(SourcePosition{name, 0, 0}, "expected rows of numbers, found none");
  return table;
}

double field_number(const NumericTable& table, const CsvRow& row, std::size_t index) {
  if (index >= row.fields.size()) {
    throw Error(SourcePosition{table.file, row.line, 0},
                "expected at least " + std::to_string(index + 1) + " columns, found " + std::to_string(row.fields.size()));
  }
  const CsvField& field = row.fields[index];
  const auto value = to_number(field.text);
  if (!value) {
    throw Error(SourcePosition{table.file, row.line, field.column}, "expected a number, found \"" + field.text + "\"");
  }
  return *value;
}

// Reads the frequency column with its scale and checks it increases strictly and is positive.
std::vector<double> frequency_column(const NumericTable& table, std::size_t index) {
  const double scale = table.header.empty() ? 1.0 : frequency_scale(table.header[index].text);
  std::vector<double> frequencies;
  frequencies.reserve(table.rows.size());
  for (const CsvRow& row : table.rows) {
    const double f = field_number(table, row, index) * scale;
    const SourcePosition where{table.file, row.line, row.fields[index].column};
    if (!(f > 0.0)) throw Error(where, "expected a positive frequency, found " + row.fields[index].text);
    if (!frequencies.empty() && !(f > frequencies.back())) {
      throw Error(where, "frequencies out of order: expected above " +
                             format_quantity(frequencies.back(), Dimension::frequency, 6) + ", found " +
                             format_quantity(f, Dimension::frequency, 6));
    }
    frequencies.push_back(f);
  }
  return frequencies;
}

std::size_t find_frequency_column(const NumericTable& table) {
  for (std::size_t i = 0; i < table.header.size(); ++i) {
    if (lower(table.header[i].text).rfind("freq", 0) == 0) return i;
  }
  return 0;
}

std::optional<TraceUnit> unit_named_in(const std::string& header) {
  const std::string name = lower(header);
  if (name.find("dbm") != std::string::npos) return TraceUnit::dbm;
  if (name.find("dbuv") != std::string::npos || name.find("db\xC2\xB5v") != std::string::npos ||
      name.find("db\xCE\xBCv") != std::string::npos) {
    return TraceUnit::dbuv;
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

std::string to_string(TraceUnit unit) { return unit == TraceUnit::dbm ? "dBm" : "dBuV"; }

TraceUnit trace_unit_from_string(std::string_view text) {
  if (text == "dBm" || text == "dbm") return TraceUnit::dbm;
  if (text == "dBuV" || text == "dbuv" || text == "dB\xC2\xB5V" || text == "dB\xCE\xBCV") return TraceUnit::dbuv;
  throw Error("expected dBuV or dBm, found \"" + std::string(text) + "\"");
}

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
  if (level_index < table.header.size()) trace.level_column = table.header[level_index].text;
  const auto named = unit_named_in(trace.level_column);
  if (unit && named && *unit != *named) {
    throw Error(SourcePosition{name, table.header_line, table.header[level_index].column},
                "the level column \"" + trace.level_column + "\" is in " + to_string(*named) + ", but the unit given is " +
                    to_string(*unit));
  }
  trace.unit = unit ? *unit : named.value_or(TraceUnit::dbuv);
  trace.frequency_hz = frequency_column(table, frequency_index);
  trace.level_dbuv.reserve(table.rows.size());
  for (const CsvRow& row : table.rows) {
    const double level = field_number(table, row, level_index);
    trace.level_dbuv.push_back(trace.unit == TraceUnit::dbm ? dbm_to_dbuv_50ohm(level) : level);
  }
  if (trace.frequency_hz.size() < 2) {
    throw Error(SourcePosition{name, 0, 0}, "expected at least 2 trace points, found " +
                                                std::to_string(trace.frequency_hz.size()));
  }
  return trace;
}

MeasuredTrace read_trace_csv(const std::string& path, std::optional<TraceUnit> unit, const std::string& level_column) {
  return parse_trace_csv(read_file(path), path, unit, level_column);
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

CorrectionTable read_correction_csv(const std::string& path) { return parse_correction_csv(read_file(path), path); }

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

std::vector<ScanCsvRow> read_scan_csv(const std::string& path) { return parse_scan_csv(read_file(path), path); }

}  // namespace spurcast

#include "core/compliance/limits.hpp"

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>

namespace spurcast {

namespace {

namespace fs = std::filesystem;

// Two frequencies closer than this (relative) are the same boundary: "0.5 MHz" == "500 kHz".
constexpr double boundary_tolerance = 1e-9;

bool same_frequency(double a_hz, double b_hz) {
  return std::abs(a_hz - b_hz) <= boundary_tolerance * std::max(std::abs(a_hz), std::abs(b_hz));
}

std::string show_frequency(double hz) { return format_quantity(hz, Dimension::frequency, 6); }

const std::vector<std::string>& measures_names() {
  static const std::vector<std::string> names{"conducted-voltage", "radiated-field", "conducted-current"};
  return names;
}

LimitQuantity quantity_from_name(const std::string& name) {
  if (name == "radiated-field") return LimitQuantity::radiated_field;
  if (name == "conducted-current") return LimitQuantity::conducted_current;
  return LimitQuantity::conducted_voltage;
}

Dimension unit_of(LimitQuantity quantity) {
  switch (quantity) {
    case LimitQuantity::conducted_voltage: return Dimension::level_dbuv;
    case LimitQuantity::radiated_field: return Dimension::level_dbuvm;
    case LimitQuantity::conducted_current: return Dimension::level_dbua;
  }
  return Dimension::level_dbuv;
}

LimitQuantity quantity_of(Dimension unit) {
  if (unit == Dimension::level_dbuvm) return LimitQuantity::radiated_field;
  if (unit == Dimension::level_dbua) return LimitQuantity::conducted_current;
  return LimitQuantity::conducted_voltage;
}

// The ASCII spelling used in messages and accepted in files (µ and μ spellings too).
std::string ascii_unit(Dimension unit) {
  if (unit == Dimension::level_dbuvm) return "dBuV/m";
  if (unit == Dimension::level_dbua) return "dBuA";
  return "dBuV";
}

Dimension read_unit(TableReader& reader) {
  const std::string text = reader.required_string("unit");
  // The spellings of units.hpp: ASCII "u", the micro sign U+00B5 and the Greek mu U+03BC.
  for (const char* mu : {"u", "\xC2\xB5", "\xCE\xBC"}) {
    const std::string prefix = std::string("dB") + mu;
    if (text == prefix + "V") return Dimension::level_dbuv;
    if (text == prefix + "V/m") return Dimension::level_dbuvm;
    if (text == prefix + "A") return Dimension::level_dbua;
  }
  reader.fail("unit", "expected one of dBuV, dBuV/m or dBuA, found \"" + text + "\"");
}

LimitSegment read_segment(const toml::table& table, const std::string& file, const std::string& where,
                          Dimension unit) {
  TableReader reader(table, file, where);
  LimitSegment segment;
  segment.where = reader.table_position();
  segment.from_hz = reader.required_quantity("from", Dimension::frequency);
  segment.to_hz = reader.required_quantity("to", Dimension::frequency);
  if (!(segment.from_hz > 0.0)) {
    reader.fail("from", "expected a positive frequency, found " + show_frequency(segment.from_hz));
  }
  if (!(segment.to_hz > segment.from_hz) || same_frequency(segment.to_hz, segment.from_hz)) {
    reader.fail("to", "frequencies out of order: expected 'to' above 'from' (" +
                          show_frequency(segment.from_hz) + "), found " + show_frequency(segment.to_hz));
  }
  const bool has_level = reader.has("level");
  const bool has_start = reader.has("start");
  const bool has_end = reader.has("end");
  if (has_level && (has_start || has_end)) {
    reader.fail(has_start ? "start" : "end",
                "expected either 'level' (flat) or 'start' and 'end' (sloped), found both");
  }
  if (has_level) {
    segment.start_level = reader.required_quantity("level", unit);
    segment.end_level = segment.start_level;
  } else if (has_start || has_end) {
    segment.start_level = reader.required_quantity("start", unit);
    segment.end_level = reader.required_quantity("end", unit);
  } else {
    throw Error(reader.table_position(), "missing key 'level' in [" + where +
                                             "] (expected 'level', or 'start' and 'end')");
  }
  reader.finish({"from", "to", "level", "start", "end"});
  return segment;
}

// The keys of a line common to files and inline lines: detector, at_boundary, segment.
LimitLine read_line_body(TableReader& reader, Dimension unit) {
  LimitLine line;
  line.where = reader.table_position();
  line.detector = detector_from_string(reader.required_choice("detector", detector_names()));
  if (auto rule = reader.optional_choice("at_boundary", {"lower", "higher"})) {
    line.at_boundary = *rule == "higher" ? BoundaryRule::higher : BoundaryRule::lower;
  }
  const auto segments = reader.table_array("segment");
  if (segments.empty()) {
    throw Error(reader.table_position(),
                "missing key 'segment' in [" + reader.where() + "] (expected at least one segment)");
  }
  for (std::size_t i = 0; i < segments.size(); ++i) {
    const std::string where = reader.where() + " segment " + std::to_string(i + 1);
    LimitSegment segment = read_segment(*segments[i], reader.file(), where, unit);
    if (!line.segments.empty()) {
      const LimitSegment& previous = line.segments.back();
      TableReader at(*segments[i], reader.file(), where);
      if (segment.from_hz < previous.from_hz && !same_frequency(segment.from_hz, previous.from_hz)) {
        at.fail("from", "segments out of order: expected 'from' at or above " +
                            show_frequency(previous.to_hz) + ", found " + show_frequency(segment.from_hz));
      }
      if (segment.from_hz < previous.to_hz && !same_frequency(segment.from_hz, previous.to_hz)) {
        at.fail("from", "overlapping segments: this one starts at " + show_frequency(segment.from_hz) +
                            ", inside the previous one (" + show_frequency(previous.from_hz) + " to " +
                            show_frequency(previous.to_hz) + ")");
      }
    }
    line.segments.push_back(segment);
  }
  return line;
}

void add_line(LimitSet& set, LimitLine line, const TableReader& reader) {
  if (set.line_for(line.detector) != nullptr) {
    reader.fail("detector", "second " + to_string(line.detector) + " line in '" + set.name +
                                "'; a set has at most one line per detector");
  }
  set.lines.push_back(std::move(line));
}

void read_confidence(TableReader& reader, LimitSet& set) {
  set.confidence_text = reader.required_string("confidence");
  if (set.confidence_text.rfind("read from", 0) == 0) {
    set.confidence = LimitConfidence::read_from_document;
  } else if (set.confidence_text.rfind("from memory", 0) == 0) {
    set.confidence = LimitConfidence::from_memory;
  } else {
    reader.fail("confidence", "expected a confidence beginning \"read from\" or \"from memory\", found \"" +
                                  set.confidence_text + "\"");
  }
}

LimitSet read_set(const toml::table& root, const std::string& file) {
  TableReader reader(root, file, "limit file");
  LimitSet set;
  set.file = file;
  set.name = reader.required_string("name");
  set.measures = quantity_from_name(reader.required_choice("measures", measures_names()));
  set.unit = read_unit(reader);
  if (set.unit != unit_of(set.measures)) {
    reader.fail("unit", "expected " + ascii_unit(unit_of(set.measures)) + " for a " + to_string(set.measures) +
                            " limit, found \"" + ascii_unit(set.unit) + "\"");
  }
  set.distance_m = reader.optional_quantity("distance", Dimension::length);
  if (set.measures == LimitQuantity::radiated_field && !set.distance_m) {
    throw Error(reader.table_position(),
                "missing key 'distance' in [limit file] (expected a length; a radiated-field limit needs "
                "its measuring distance)");
  }
  if (set.distance_m && !(*set.distance_m > 0.0)) {
    reader.fail("distance", "expected a positive distance, found " +
                                format_quantity(*set.distance_m, Dimension::length));
  }
  set.source = reader.required_string("source");
  read_confidence(reader, set);
  set.notes = reader.optional_string("notes").value_or("");
  const auto lines = reader.table_array("line");
  if (lines.empty()) {
    throw Error(reader.table_position(), "missing key 'line' in [limit file] (expected at least one [[line]])");
  }
  for (std::size_t i = 0; i < lines.size(); ++i) {
    TableReader line_reader(*lines[i], file, "line " + std::to_string(i + 1));
    LimitLine line = read_line_body(line_reader, set.unit);
    line_reader.finish({"detector", "at_boundary", "segment"});
    add_line(set, std::move(line), line_reader);
  }
  reader.finish({"name", "measures", "unit", "distance", "source", "confidence", "notes", "line"});
  return set;
}

bool exists_as_file(const fs::path& path) {
  std::error_code ignored;
  return fs::is_regular_file(path, ignored);
}

}  // namespace

std::string to_string(LimitQuantity quantity) {
  switch (quantity) {
    case LimitQuantity::conducted_voltage: return "conducted-voltage";
    case LimitQuantity::radiated_field: return "radiated-field";
    case LimitQuantity::conducted_current: return "conducted-current";
  }
  return "conducted-voltage";
}

double LimitSegment::level_at(double frequency_hz) const {
  if (start_level == end_level) return start_level;
  const double f = std::clamp(frequency_hz, from_hz, to_hz);
  // L(f) = L1 + (L2 − L1)·log10(f/f1)/log10(f2/f1)  (docs/references.md §3.2)
  return start_level + (end_level - start_level) * std::log10(f / from_hz) / std::log10(to_hz / from_hz);
}

std::optional<double> LimitLine::level_at(double frequency_hz) const {
  std::optional<double> level;
  for (const LimitSegment& segment : segments) {
    const bool inside = (frequency_hz >= segment.from_hz || same_frequency(frequency_hz, segment.from_hz)) &&
                        (frequency_hz <= segment.to_hz || same_frequency(frequency_hz, segment.to_hz));
    if (!inside) continue;
    const double value = segment.level_at(frequency_hz);
    if (!level) {
      level = value;
    } else {
      level = at_boundary == BoundaryRule::lower ? std::min(*level, value) : std::max(*level, value);
    }
  }
  return level;
}

double LimitLine::low_hz() const { return segments.empty() ? 0.0 : segments.front().from_hz; }
double LimitLine::high_hz() const { return segments.empty() ? 0.0 : segments.back().to_hz; }

const LimitLine* LimitSet::line_for(Detector detector) const {
  for (const LimitLine& line : lines) {
    if (line.detector == detector) return &line;
  }
  return nullptr;
}

LimitSet read_limit_file(const std::string& path) { return read_set(parse_toml_file(path, "limit file"), path); }

LimitSet parse_limit_text(std::string_view text, const std::string& name) {
  return read_set(parse_toml_text(text, name), name);
}

std::optional<std::string> resolve_limit_file(const std::string& name, const std::string& base_directory,
                                              const ShippedData& data) {
  if (name.empty()) return std::nullopt;
  const fs::path given(name);
  std::vector<fs::path> candidates;
  if (given.is_absolute()) {
    candidates.push_back(given);
  } else {
    candidates.push_back(fs::path(base_directory.empty() ? "." : base_directory) / given);
    const fs::path shipped(data.limits_directory());
    candidates.push_back(shipped / given);
    const std::string prefix = "limits/";
    if (name.rfind(prefix, 0) == 0) candidates.push_back(shipped / name.substr(prefix.size()));
  }
  if (given.extension() != ".toml") {
    const std::size_t count = candidates.size();
    for (std::size_t i = 0; i < count; ++i) candidates.push_back(fs::path(candidates[i].string() + ".toml"));
  }
  for (const fs::path& candidate : candidates) {
    if (exists_as_file(candidate)) return candidate.lexically_normal().string();
  }
  // No regular file: a directory, pipe or device of that name is named, so that the loader
  // refuses it with what it is (core/input/input_file.hpp) rather than "cannot find".
  for (const fs::path& candidate : candidates) {
    std::error_code ignored;
    if (fs::exists(candidate, ignored)) return candidate.lexically_normal().string();
  }
  return std::nullopt;
}

LimitsSpec read_limits_section(TableReader& reader, const std::string& scenario_directory, const ShippedData& data) {
  LimitsSpec spec;
  spec.guard_db = reader.quantity_or("guard", Dimension::decibel, default_guard_db);
  if (!(spec.guard_db >= 0.0)) {
    reader.fail("guard", "expected a guard band of 0 dB or more, found " +
                             format_quantity(spec.guard_db, Dimension::decibel));
  }
  if (const toml::node* files = reader.node("files")) {
    std::vector<const toml::node*> names;
    if (const auto* array = files->as_array()) {
      for (const toml::node& element : *array) names.push_back(&element);
    } else {
      names.push_back(files);
    }
    for (const toml::node* element : names) {
      const auto* text = element->as_string();
      if (text == nullptr) {
        throw Error(position_of(*element, reader.file()), "expected a limit file name (a string)");
      }
      const auto path = resolve_limit_file(text->get(), scenario_directory, data);
      if (!path) {
        throw Error(position_of(*element, reader.file()),
                    "cannot find limit file \"" + text->get() + "\" in the scenario's folder or in " +
                        data.limits_directory());
      }
      LimitSet set = read_limit_file(*path);
      // Reports name a shipped file by its place in the data folder, not by where it is installed.
      set.file = data.shown_path(*path);
      spec.sets.push_back(std::move(set));
    }
  }
  const auto lines = reader.table_array("line");
  for (std::size_t i = 0; i < lines.size(); ++i) {
    TableReader line_reader(*lines[i], reader.file(), "limits.line " + std::to_string(i + 1));
    const std::string name = line_reader.required_string("name");
    const Dimension unit = read_unit(line_reader);
    LimitQuantity measures = quantity_of(unit);
    if (auto text = line_reader.optional_choice("measures", measures_names())) {
      measures = quantity_from_name(*text);
      if (unit != unit_of(measures)) {
        line_reader.fail("unit", "expected " + ascii_unit(unit_of(measures)) + " for a " + to_string(measures) +
                                     " limit, found \"" + ascii_unit(unit) + "\"");
      }
    }
    const auto distance_m = line_reader.optional_quantity("distance", Dimension::length);
    const auto source = line_reader.optional_string("source");
    LimitLine line = read_line_body(line_reader, unit);
    // Inline lines with the same name form one set (e.g. a quasi-peak and an average line).
    LimitSet* set = nullptr;
    for (LimitSet& existing : spec.sets) {
      if (existing.file.empty() && existing.name == name) set = &existing;
    }
    if (set == nullptr) {
      LimitSet fresh;
      fresh.name = name;
      fresh.measures = measures;
      fresh.unit = unit;
      fresh.distance_m = distance_m;
      fresh.source = source.value_or("entered in " + reader.file());
      fresh.confidence_text = "read from the user's specification";
      fresh.confidence = LimitConfidence::read_from_document;
      if (line_reader.has("confidence")) read_confidence(line_reader, fresh);
      spec.sets.push_back(std::move(fresh));
      set = &spec.sets.back();
    } else {
      if (set->unit != unit) {
        line_reader.fail("unit", "expected " + ascii_unit(set->unit) + " like the other lines of '" + name +
                                     "', found \"" + ascii_unit(unit) + "\"");
      }
      if (line_reader.has("confidence")) (void)line_reader.required_string("confidence");
    }
    add_line(*set, std::move(line), line_reader);
    line_reader.finish({"name", "unit", "measures", "distance", "source", "confidence", "detector",
                        "at_boundary", "segment"});
  }
  reader.finish({"files", "guard", "line"});
  return spec;
}

std::vector<std::string> shipped_limit_files(const ShippedData& data) {
  std::vector<std::string> files;
  std::error_code error;
  const fs::path directory(data.limits_directory());
  for (const auto& entry : fs::directory_iterator(directory, error)) {
    if (!entry.is_regular_file() || entry.path().extension() != ".toml") continue;
    // Band plans may share the directory: a limit file declares `measures` at the top level.
    std::ifstream in(entry.path());
    std::string text_line;
    bool is_limit_file = false;
    while (std::getline(in, text_line)) {
      if (text_line.rfind("measures", 0) == 0) {
        is_limit_file = true;
        break;
      }
    }
    if (is_limit_file) files.push_back(entry.path().string());
  }
  std::sort(files.begin(), files.end());
  return files;
}

std::string limit_unit_symbol(const LimitSet& set) { return unit_symbol(set.unit); }

std::string line_label(const LimitSet& set, const LimitLine& line) {
  return set.name + " / " + to_string(line.detector);
}

}  // namespace spurcast

#include "core/detector.hpp"

#include "core/error.hpp"

namespace spurcast {

std::vector<Detector> all_detectors() {
  return {Detector::peak, Detector::quasi_peak, Detector::average};
}

std::string to_string(Detector detector) {
  switch (detector) {
    case Detector::peak: return "peak";
    case Detector::quasi_peak: return "quasi-peak";
    case Detector::average: return "average";
  }
  return "peak";
}

std::vector<std::string> detector_names() {
  std::vector<std::string> names;
  for (Detector detector : all_detectors()) names.push_back(to_string(detector));
  return names;
}

std::optional<Detector> find_detector(std::string_view name) {
  for (Detector detector : all_detectors()) {
    if (to_string(detector) == name) return detector;
  }
  return std::nullopt;
}

Detector detector_from_string(std::string_view name) {
  if (auto found = find_detector(name)) return *found;
  throw Error("expected one of peak, quasi-peak or average, found \"" + std::string(name) + "\"");
}

}  // namespace spurcast

// Huge-page advice for large record buffers (core/source/huge_pages). External reference: Linux
// madvise(2), MADV_HUGEPAGE, and the kernel's transparent-hugepage counters (Documentation/
// admin-guide/mm/transhuge.rst: AnonHugePages in /proc/PID/smaps, thp_fault_alloc and
// thp_fault_fallback in /proc/vmstat).
#include <doctest/doctest.h>

#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "core/source/huge_pages.hpp"

using namespace spurcast;

namespace {

long counter(const std::string& file, const std::string& name) {
  std::ifstream in(file);
  std::string line;
  while (std::getline(in, line)) {
    if (line.rfind(name, 0) == 0) {
      std::istringstream fields(line.substr(name.size()));
      long value = 0;
      fields >> value;
      return value;
    }
  }
  return -1;
}

std::string thp_mode() {
  std::ifstream in("/sys/kernel/mm/transparent_hugepage/enabled");
  std::string text;
  std::getline(in, text);
  const auto open = text.find('['), close = text.find(']');
  return open == std::string::npos || close == std::string::npos ? "" : text.substr(open + 1, close - open - 1);
}

}  // namespace

TEST_CASE("advice never changes the data, whatever the pointer and size") {
  advise_huge_pages(nullptr, 1 << 30);
  std::vector<double> small;
  reserve_with_huge_pages(small, 10);
  CHECK(small.capacity() >= 10);
  small.assign(10, 2.5);
  std::vector<double> big(3, 1.0);  // not empty: reserve only, no advice on touched storage
  reserve_with_huge_pages(big, std::size_t{1} << 20);
  CHECK(big.capacity() >= (std::size_t{1} << 20));
  CHECK(big == std::vector<double>(3, 1.0));
}

TEST_CASE("a large advised buffer is faulted in with huge pages where the kernel offers them") {
  const std::string mode = thp_mode();
  if (mode != "always" && mode != "madvise") {
    MESSAGE("transparent huge pages are '" << mode << "' here: nothing to check");
    return;
  }
  const long allocated_before = counter("/proc/vmstat", "thp_fault_alloc ");
  const long fallback_before = counter("/proc/vmstat", "thp_fault_fallback ");
  std::vector<double> record;
  reserve_with_huge_pages(record, std::size_t{8} << 20);  // 64 MiB
  record.resize(std::size_t{8} << 20, 1.0);
  const long allocated = counter("/proc/vmstat", "thp_fault_alloc ") - allocated_before;
  const long fallback = counter("/proc/vmstat", "thp_fault_fallback ") - fallback_before;
  // Either the faults were served with 2 MiB pages, or the kernel tried and fell back (memory too
  // fragmented): in both cases the region was advised. Other processes only add to the counts.
  CHECK(allocated + fallback >= 16);
  CHECK(record[record.size() - 1] == 1.0);
}

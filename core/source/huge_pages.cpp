#include "core/source/huge_pages.hpp"

#include <sys/mman.h>

#include <cstdint>

namespace spurcast {

void advise_huge_pages(void* data, std::size_t bytes) {
  constexpr std::uintptr_t huge_page = std::uintptr_t{2} << 20;
  if (data == nullptr || bytes < 2 * huge_page) return;
  const auto begin = reinterpret_cast<std::uintptr_t>(data);
  const std::uintptr_t first = (begin + huge_page - 1) / huge_page * huge_page;
  const std::uintptr_t last = (begin + bytes) / huge_page * huge_page;
#ifdef MADV_HUGEPAGE
  if (last > first) (void)::madvise(reinterpret_cast<void*>(first), last - first, MADV_HUGEPAGE);
#endif
}

}  // namespace spurcast

#pragma once
/// Large record buffers (a capture's samples, an FFT of millions of points) are touched once,
/// front to back, right after they are allocated; with 4 KiB pages that is one page fault per
/// 4 KiB, about a sixth of the time of `spectrum --capture` on a 2^22-sample file. Asking the
/// kernel for transparent huge pages on such a buffer before it is first written replaces 512
/// faults by one (Linux madvise(2), MADV_HUGEPAGE; effective when
/// /sys/kernel/mm/transparent_hugepage/enabled is "madvise" or "always", Debian's default is
/// "madvise"). It is advice: where the kernel declines, nothing changes but the speed.
#include <cstddef>
#include <vector>

namespace spurcast {

/// Advises huge pages for the whole 2 MiB pages inside [data, data + bytes). Buffers under
/// 4 MiB are left alone (nothing to gain).
void advise_huge_pages(void* data, std::size_t bytes);

/// Reserves room for `count` elements and advises huge pages on the untouched storage.
template <typename T>
void reserve_with_huge_pages(std::vector<T>& vector, std::size_t count) {
  vector.reserve(count);
  if (vector.empty()) advise_huge_pages(vector.data(), vector.capacity() * sizeof(T));
}

}  // namespace spurcast

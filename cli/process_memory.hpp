#pragma once
/// How the spurcast process asks glibc's allocator to manage memory (the CLI's main and the
/// benchmarks, so that a bench times what the command does).
///
/// A sweep or a dithered prediction allocates and frees the same few-megabyte buffers at every
/// point. By default glibc serves blocks above 128 kB to 32 MB with fresh mmap() and gives freed
/// heap tops back to the kernel, so each point faults its pages in again: on the 2-core test
/// machine 15 % of a dithered sweep's time was page faults (perf, 2026-12-04). Blocks up to 64 MB
/// now come from the heap and up to 256 MB of freed heap is kept for reuse (judgement: the
/// 10^8-sample capture's records, hundreds of MB each, still map and unmap; the resident peak of
/// tests/bench/memory.sh is unchanged, README). Under the sanitizers the calls are ignored.
#include <malloc.h>

#include <string>

namespace spurcast::cli {

inline constexpr int mmap_threshold_bytes = 64 << 20;
inline constexpr int trim_threshold_bytes = 256 << 20;
inline constexpr int top_pad_bytes = 16 << 20;

inline void keep_freed_memory_for_reuse() {
  mallopt(M_MMAP_THRESHOLD, mmap_threshold_bytes);
  mallopt(M_TRIM_THRESHOLD, trim_threshold_bytes);
  mallopt(M_TOP_PAD, top_pad_bytes);
}

/// The same settings as glibc's environment variables, for a yardstick run in another process
/// (numpy allocates its FFT output afresh at every call and pays the same page faults).
inline std::string same_allocator_environment() {
  return "MALLOC_MMAP_THRESHOLD_=" + std::to_string(mmap_threshold_bytes) +
         " MALLOC_TRIM_THRESHOLD_=" + std::to_string(trim_threshold_bytes) +
         " MALLOC_TOP_PAD_=" + std::to_string(top_pad_bytes);
}

}  // namespace spurcast::cli

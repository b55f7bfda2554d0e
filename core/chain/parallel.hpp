#pragma once
/// The worker loop shared by the chain's batch runs (sweep points, sensitivity keys): indices are
/// handed out one at a time from a shared counter, so a slow point holds up no other thread.
#include <atomic>
#include <cstddef>
#include <exception>
#include <mutex>
#include <thread>
#include <vector>

namespace spurcast {

/// Calls `fn(i)` once for every i in [0, count), on `threads` threads (0 or 1: in the calling
/// thread, in order). Each call writes only its own index's slot, so results need no lock. The
/// first exception thrown by `fn` stops the handing out of further indices; every thread is joined
/// and that exception is rethrown here.
/// Example: parallel_for_each_index(points.size(), 4, [&](std::size_t i) { out[i] = run(points[i]);
/// });
template <typename Fn>
void parallel_for_each_index(std::size_t count, unsigned threads, Fn&& fn) {
  std::atomic<std::size_t> next{0};
  std::exception_ptr failure;
  std::mutex failure_mutex;
  auto worker = [&] {
    try {
      for (std::size_t i = next++; i < count; i = next++) fn(i);
    } catch (...) {
      const std::lock_guard lock(failure_mutex);
      if (!failure) failure = std::current_exception();
      next = count;
    }
  };
  if (threads <= 1) {
    worker();
  } else {
    std::vector<std::thread> pool;
    pool.reserve(threads);
    for (unsigned t = 0; t < threads; ++t) pool.emplace_back(worker);
    for (std::thread& t : pool) t.join();
  }
  if (failure) std::rethrow_exception(failure);
}

}  // namespace spurcast

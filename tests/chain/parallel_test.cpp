// The shared worker loop (core/chain/parallel.hpp) against the contract of a parallel for-each
// (common practice): every index exactly once whatever the thread count, the first exception
// reaches the caller after every thread is joined, and no index is started after it.
#include "core/chain/parallel.hpp"

#include <doctest/doctest.h>

#include <atomic>
#include <chrono>
#include <cstddef>
#include <stdexcept>
#include <thread>
#include <vector>

TEST_CASE("parallel_for_each_index visits every index once, in order on one thread") {
  for (const unsigned threads : {0u, 1u, 2u, 3u, 8u}) {
    INFO("threads ", threads);
    const std::size_t count = 1000;
    std::vector<int> visits(count, 0);
    std::vector<std::size_t> order;
    spurcast::parallel_for_each_index(count, threads, [&](std::size_t i) {
      ++visits[i];  // each index is its own slot: no lock needed
      if (threads <= 1) order.push_back(i);
    });
    for (std::size_t i = 0; i < count; ++i) CHECK(visits[i] == 1);
    if (threads <= 1) {
      REQUIRE(order.size() == count);
      for (std::size_t i = 0; i < count; ++i) CHECK(order[i] == i);
    }
  }
  int calls = 0;
  spurcast::parallel_for_each_index(0, 4, [&](std::size_t) { ++calls; });
  CHECK(calls == 0);
}

TEST_CASE("parallel_for_each_index rethrows the first exception and stops handing out indices") {
  for (const unsigned threads : {1u, 2u, 4u}) {
    INFO("threads ", threads);
    const std::size_t count = 100000;
    std::atomic<std::size_t> started{0};
    std::atomic<bool> thrown{false};
    CHECK_THROWS_WITH_AS(spurcast::parallel_for_each_index(
                             count, threads,
                             [&](std::size_t i) {
                               ++started;
                               // After the throw, other threads' work is slow, so
                               // only a stopped hand-out keeps `started` small.
                               if (thrown)
                                 std::this_thread::sleep_for(std::chrono::milliseconds(1));
                               if (i == 10) {
                                 thrown = true;
                                 throw std::runtime_error("index 10 failed");
                               }
                             }),
                         "index 10 failed", std::runtime_error);
    if (threads == 1) {
      CHECK(started == 11);  // in order: 0..10, then nothing
    } else {
      // Indices other threads took before the hand-out stopped still run, each 1 ms after the
      // throw: reaching half the count would take the throwing thread descheduled for about 50 s /
      // threads.
      CHECK(started < count / 2);
    }
  }
}

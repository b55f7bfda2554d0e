// Timing helpers shared by the benchmarks (not tests; never run by ctest). The machine running a
// benchmark is often shared, so each figure is a best of several runs, and CPU time is given beside
// wall time: it shows what the code costs when other work competes for the cores.
#pragma once

#include <time.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <functional>
#include <string>
#include <vector>

#include "cli/process_memory.hpp"

namespace spurcast::bench {

/// CPU time of the whole process (every thread) [s].
inline double process_cpu_s() {
  timespec t{};
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t);
  return static_cast<double>(t.tv_sec) + 1e-9 * static_cast<double>(t.tv_nsec);
}

/// CPU time of the calling thread [ms].
inline double thread_cpu_ms() {
  timespec t{};
  clock_gettime(CLOCK_THREAD_CPUTIME_ID, &t);
  return 1e3 * static_cast<double>(t.tv_sec) + 1e-6 * static_cast<double>(t.tv_nsec);
}

struct Timing {
  double wall_s = 1e300;  ///< best wall time [s]
  double cpu_s = 1e300;   ///< best process CPU time, all threads [s]
};

/// The best wall and the best process CPU time of `runs` runs of `run` (each minimum on its own).
inline Timing best_of(int runs, const std::function<void()>& run) {
  Timing best;
  for (int i = 0; i < runs; ++i) {
    const double cpu0 = process_cpu_s();
    const auto start = std::chrono::steady_clock::now();
    run();
    const std::chrono::duration<double> elapsed = std::chrono::steady_clock::now() - start;
    best.wall_s = std::min(best.wall_s, elapsed.count());
    best.cpu_s = std::min(best.cpu_s, process_cpu_s() - cpu0);
  }
  return best;
}

/// The best of `runs` runs in the calling thread's CPU time [ms] (single-threaded work).
inline double best_thread_cpu_ms(int runs, const std::function<void()>& run) {
  double best = 1e300;
  for (int i = 0; i < runs; ++i) {
    const double start = thread_cpu_ms();
    run();
    best = std::min(best, thread_cpu_ms() - start);
  }
  return best;
}

/// The best of `runs` runs in wall time [ms].
inline double best_wall_ms(int runs, const std::function<void()>& run) {
  double best = 1e300;
  for (int i = 0; i < runs; ++i) {
    const auto start = std::chrono::steady_clock::now();
    run();
    best = std::min(best, std::chrono::duration<double, std::milli>(std::chrono::steady_clock::now() - start).count());
  }
  return best;
}

/// Runs `script_file` (a path without a single quote) with Debian's /usr/bin/python3 and
/// `arguments` (already quoted for the shell) and reads the numbers it prints on its standard
/// output, at most `count`: fewer (none) when Python or a module it imports is missing or the
/// script fails. Its standard error is shown when `show_errors`, else discarded.
inline std::vector<double> python_file_numbers(const std::string& script_file,
                                               const std::string& arguments, std::size_t count,
                                               bool show_errors) {
  std::vector<double> numbers;
  // Under the allocator settings of the spurcast command (cli/process_memory.hpp): without them
  // numpy's rfft of 2^22 doubles took 0.33 s on the test machine instead of 0.14 s, most of it
  // faulting in a fresh output array.
  const std::string command = cli::same_allocator_environment() + " /usr/bin/python3 '" + script_file + "'" +
                              (arguments.empty() ? "" : " " + arguments) +
                              (show_errors ? "" : " 2>/dev/null");
  if (std::FILE* pipe = ::popen(command.c_str(), "r")) {
    double value = 0.0;
    while (numbers.size() < count && std::fscanf(pipe, "%lf", &value) == 1)
      numbers.push_back(value);
    if (::pclose(pipe) != 0) numbers.clear();
  }
  return numbers;
}

/// Runs a Python script (its text) with Debian's /usr/bin/python3 and reads the one number it
/// prints (a yardstick's seconds); 0 when Python or the module it imports is missing.
inline double python_number(const std::string& script) {
  const std::string file = "/tmp/spurcast_bench_" + std::to_string(::getpid()) + ".py";
  if (std::FILE* f = std::fopen(file.c_str(), "w")) {
    std::fputs(script.c_str(), f);
    std::fclose(f);
  }
  const std::vector<double> numbers = python_file_numbers(file, "", 1, false);
  std::remove(file.c_str());
  return numbers.empty() ? 0.0 : numbers.front();
}

/// The yardstick of the speed goals: numpy.fft.rfft of 2^22 random doubles, best of 5 [s].
inline double numpy_rfft_yardstick_s() {
  return python_number(
      "import time, numpy as np\n"
      "x = np.random.default_rng(1).standard_normal(1 << 22)\n"
      "best = 1e9\n"
      "for _ in range(5):\n"
      "    t = time.perf_counter(); np.fft.rfft(x); best = min(best, time.perf_counter() - t)\n"
      "print(best)\n");
}

}  // namespace spurcast::bench

#include "core/fftw_lock.hpp"

#include <fftw3.h>

namespace spurcast {

std::mutex& fftw_planner_mutex() {
  static std::mutex mutex;
  return mutex;
}

bool fftw_threads_ready() {
  // Guarded by the planner lock (the caller holds it); FFTW's thread state is process-wide too.
  static const bool ready = fftw_init_threads() != 0;
  return ready;
}

}  // namespace spurcast

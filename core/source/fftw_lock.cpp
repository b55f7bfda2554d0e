#include "core/source/fftw_lock.hpp"

namespace spurcast {

std::mutex& fftw_planner_mutex() {
  static std::mutex mutex;
  return mutex;
}

}  // namespace spurcast

#pragma once
/// FFTW's planner keeps process-wide state and is not thread-safe (FFTW 3.3 manual §5.4, "Thread
/// safety": only fftw_execute is). Every module that creates or destroys plans takes this one lock,
/// so transforms planned from different stages and threads (a parallel sweep of dithered sources,
/// say) never race. It is the one process-wide object in the library, because the state it guards
/// is process-wide too.
#include <mutex>

namespace spurcast {

/// The lock around fftw_plan_* and fftw_destroy_plan calls.
[[nodiscard]] std::mutex& fftw_planner_mutex();

}  // namespace spurcast

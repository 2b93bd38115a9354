// A parallel loop for independent cases: body(i) for every i in [0, n), on up to `threads`
// threads (the calling thread is one of them), each taking the next index as it finishes one,
// so a helper the scheduler starts late (a busy machine) costs at most one case's wait. A body
// writes only its own result slot, so what the loop computes does not depend on the thread
// count or on which thread ran which case. The first exception a body throws is rethrown on the
// calling thread once every thread has stopped.
#pragma once

#include <algorithm>
#include <atomic>
#include <cstddef>
#include <exception>
#include <mutex>
#include <thread>
#include <vector>

namespace peakplan {

template <class Body>
void parallel_for(size_t n, int threads, Body&& body) {
  const size_t t = std::min(n, static_cast<size_t>(std::max(1, threads)));
  if (t <= 1) {
    for (size_t i = 0; i < n; ++i) body(i);
    return;
  }
  std::exception_ptr failure;
  std::mutex failure_mutex;
  std::atomic<size_t> next{0};
  auto work = [&] {
    try {
      for (size_t i = next++; i < n; i = next++) body(i);
    } catch (...) {
      next = n;  // the others stop after their current case
      const std::lock_guard lock(failure_mutex);
      if (!failure) failure = std::current_exception();
    }
  };
  {
    std::vector<std::jthread> pool;
    for (size_t k = 1; k < t; ++k) pool.emplace_back(work);
    work();
  }
  if (failure) std::rethrow_exception(failure);
}

}  // namespace peakplan

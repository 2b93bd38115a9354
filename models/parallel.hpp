// A parallel loop for independent cases: body(i) for every i in [0, n), on up to `threads`
// threads (the calling thread is one of them). The helpers are a pool of threads kept for the
// life of the program, and every thread takes the next index as it finishes one; the caller
// waits only for cases a helper has already started, so on a busy machine, where a helper may
// wake late, a loop costs no more than running it alone. A body writes only its own result
// slot, so what the loop computes does not depend on the thread count or on which thread ran
// which case. The first exception a body throws is rethrown on the calling thread once every
// case has finished or been skipped.
#pragma once

#include <cstddef>
#include <functional>

namespace peakplan {

void parallel_for(size_t n, int threads, const std::function<void(size_t)>& body);

}  // namespace peakplan

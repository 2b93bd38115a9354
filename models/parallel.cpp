#include "models/parallel.hpp"

#include <algorithm>
#include <atomic>
#include <condition_variable>
#include <deque>
#include <exception>
#include <memory>
#include <mutex>
#include <thread>
#include <vector>

namespace peakplan {
namespace {

// One loop. Helpers hold it by shared_ptr, so one that wakes after the loop has finished finds
// no index left and touches nothing of the caller's.
struct Job {
  size_t n = 0;
  const std::function<void(size_t)>* body = nullptr;
  int helpers = 0;  // helper places left; guarded by the pool's mutex
  std::atomic<size_t> next{0}, done{0};
  std::atomic<bool> failed{false};
  std::exception_ptr failure;  // written once, by the thread that sets `failed`
  std::mutex done_mutex;
  std::condition_variable done_signal;

  void work() {
    for (size_t i = next++; i < n; i = next++) {
      if (!failed.load(std::memory_order_relaxed)) {
        try {
          (*body)(i);
        } catch (...) {
          if (!failed.exchange(true)) failure = std::current_exception();
        }
      }
      if (done.fetch_add(1) + 1 == n) {
        const std::lock_guard lock(done_mutex);
        done_signal.notify_all();
      }
    }
  }
};

class Pool {
 public:
  ~Pool() {
    {
      const std::lock_guard lock(mutex_);
      stop_ = true;
    }
    wake_.notify_all();
  }  // the jthreads join here

  void run(size_t n, int threads, const std::function<void(size_t)>& body) {
    auto job = std::make_shared<Job>();
    job->n = n;
    job->body = &body;
    job->helpers = threads - 1;
    {
      const std::lock_guard lock(mutex_);
      while (static_cast<int>(workers_.size()) < threads - 1) workers_.emplace_back([this] { serve(); });
      queue_.push_back(job);
    }
    wake_.notify_all();
    job->work();
    {
      std::unique_lock lock(job->done_mutex);
      job->done_signal.wait(lock, [&] { return job->done.load() == n; });
    }
    {
      const std::lock_guard lock(mutex_);
      std::erase(queue_, job);
    }
    if (job->failure) std::rethrow_exception(job->failure);
  }

 private:
  void serve() {
    for (;;) {
      std::shared_ptr<Job> job;
      {
        std::unique_lock lock(mutex_);
        wake_.wait(lock, [&] { return stop_ || !queue_.empty(); });
        if (stop_) return;
        job = queue_.front();
        if (--job->helpers <= 0) queue_.pop_front();
      }
      job->work();
    }
  }

  std::mutex mutex_;
  std::condition_variable wake_;
  std::deque<std::shared_ptr<Job>> queue_;
  bool stop_ = false;
  std::vector<std::jthread> workers_;  // last: joined before the rest is destroyed
};

Pool& pool() {
  static Pool instance;
  return instance;
}

}  // namespace

void parallel_for(size_t n, int threads, const std::function<void(size_t)>& body) {
  const int t = static_cast<int>(std::min<size_t>(n, static_cast<size_t>(std::max(1, threads))));
  if (t <= 1) {
    for (size_t i = 0; i < n; ++i) body(i);
    return;
  }
  pool().run(n, t, body);
}

}  // namespace peakplan

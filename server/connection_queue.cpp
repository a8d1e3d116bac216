#include "connection_queue.h"

namespace planckton::server {

namespace {
thread_local bool overflow_thread = false;
}  // namespace

bool on_overflow_thread() { return overflow_thread; }

ConnectionQueue::ConnectionQueue(std::size_t workers, std::size_t max_waiting, std::size_t overflow_workers)
    : max_waiting_(max_waiting) {
  for (std::size_t i = 0; i < workers; ++i) workers_.threads.emplace_back([this] { run(workers_, false); });
  for (std::size_t i = 0; i < overflow_workers; ++i) overflow_.threads.emplace_back([this] { run(overflow_, true); });
}

ConnectionQueue::~ConnectionQueue() { shutdown(); }

void ConnectionQueue::enqueue(std::function<void()> job) {
  {
    const std::lock_guard lock(mutex_);
    Pool& pool = workers_.jobs.size() < max_waiting_ ? workers_ : overflow_;
    pool.jobs.push_back(std::move(job));
  }
  wake_.notify_all();
}

void ConnectionQueue::shutdown() {
  {
    const std::lock_guard lock(mutex_);
    if (shutting_down_) return;
    shutting_down_ = true;
  }
  wake_.notify_all();
  for (Pool* pool : {&workers_, &overflow_}) {
    for (std::thread& thread : pool->threads) {
      if (thread.joinable()) thread.join();
    }
  }
}

// Like httplib's ThreadPool: take jobs until shut down and none is left.
void ConnectionQueue::run(Pool& pool, bool overflow) {
  overflow_thread = overflow;
  while (true) {
    std::function<void()> job;
    {
      std::unique_lock lock(mutex_);
      wake_.wait(lock, [&] { return shutting_down_ || !pool.jobs.empty(); });
      if (pool.jobs.empty()) return;
      job = std::move(pool.jobs.front());
      pool.jobs.pop_front();
    }
    job();
  }
}

}  // namespace planckton::server

#include "connection_queue.h"

#include <atomic>

namespace planckton::server {

namespace {
thread_local bool overflow_thread = false;
std::atomic<std::size_t> waiting_connections{0};  // the workers' queue, over every ConnectionQueue
}  // namespace

bool on_overflow_thread() { return overflow_thread; }
bool connections_waiting() { return waiting_connections.load(std::memory_order_relaxed) > 0; }

ConnectionQueue::ConnectionQueue(std::size_t workers, std::size_t max_waiting, std::size_t overflow_workers)
    : max_waiting_(max_waiting) {
  for (std::size_t i = 0; i < workers; ++i) workers_.threads.emplace_back([this] { run(workers_, false); });
  for (std::size_t i = 0; i < overflow_workers; ++i) overflow_.threads.emplace_back([this] { run(overflow_, true); });
}

ConnectionQueue::~ConnectionQueue() { shutdown(); }

void ConnectionQueue::enqueue(std::function<void()> job) {
  Pool* pool = nullptr;
  {
    const std::lock_guard lock(mutex_);
    pool = workers_.jobs.size() < max_waiting_ ? &workers_ : &overflow_;
    pool->jobs.push_back(std::move(job));
    if (pool == &workers_) ++waiting_connections;
  }
  pool->wake.notify_one();
}

void ConnectionQueue::shutdown() {
  {
    const std::lock_guard lock(mutex_);
    if (shutting_down_) return;
    shutting_down_ = true;
  }
  workers_.wake.notify_all();
  overflow_.wake.notify_all();
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
      pool.wake.wait(lock, [&] { return shutting_down_ || !pool.jobs.empty(); });
      if (pool.jobs.empty()) return;
      job = std::move(pool.jobs.front());
      pool.jobs.pop_front();
      if (!overflow) --waiting_connections;
    }
    job();
  }
}

}  // namespace planckton::server

// The queue of accepted connections for httplib, with a bound on how many may wait for a worker.
//
// httplib hands each accepted connection to a TaskQueue; its own ThreadPool queues without limit,
// so under overload clients wait without an answer. Here, once `max_waiting` connections are
// waiting, further ones go to a small overflow pool whose threads answer every request with 503 and
// Retry-After (routes.cpp asks `on_overflow_thread()`) and close the connection.
//
// An overflow thread must read a request before it can answer it, and a client that sends its
// request slowly holds that thread (httplib's read timeout applies to each read, not to the whole
// request). With one overflow thread, one such client made every other client beyond the queue wait
// without an answer; the pool has kOverflowWorkers threads, so it takes that many slow clients at
// once to delay the 503s (a buffering reverse proxy in front removes the case: see the README).
#pragma once

#include <httplib.h>

#include <condition_variable>
#include <cstddef>
#include <deque>
#include <functional>
#include <mutex>
#include <thread>
#include <vector>

namespace planckton::server {

// True on an overflow thread: the request it reads is to be refused with 503.
bool on_overflow_thread();

// True while accepted connections wait for a worker (routes.cpp then asks clients to close their
// kept-alive connections, so that the workers take the waiting ones in turn).
bool connections_waiting();

class ConnectionQueue final : public httplib::TaskQueue {
 public:
  static constexpr std::size_t kOverflowWorkers = 8;

  ConnectionQueue(std::size_t workers, std::size_t max_waiting, std::size_t overflow_workers = kOverflowWorkers);
  ~ConnectionQueue() override;
  void enqueue(std::function<void()> job) override;
  void shutdown() override;

 private:
  struct Pool {
    std::deque<std::function<void()>> jobs;
    std::vector<std::thread> threads;
    std::condition_variable wake;  // one per pool: a connection wakes one thread of its own pool
  };
  void run(Pool& pool, bool overflow);

  std::size_t max_waiting_;
  std::mutex mutex_;
  bool shutting_down_ = false;
  Pool workers_;
  Pool overflow_;
};

}  // namespace planckton::server

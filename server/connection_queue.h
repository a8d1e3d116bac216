// The queue of accepted connections for httplib, with a bound on how many may wait for a worker.
//
// httplib hands each accepted connection to a TaskQueue; its own ThreadPool queues without limit,
// so under overload clients wait without an answer. Here, once `max_waiting` connections are
// waiting, further ones go to a small overflow pool whose threads answer every request with 503 and
// Retry-After (routes.cpp asks `on_overflow_thread()`) and close the connection.
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

class ConnectionQueue final : public httplib::TaskQueue {
 public:
  ConnectionQueue(std::size_t workers, std::size_t max_waiting, std::size_t overflow_workers = 1);
  ~ConnectionQueue() override;
  void enqueue(std::function<void()> job) override;
  void shutdown() override;

 private:
  struct Pool {
    std::deque<std::function<void()>> jobs;
    std::vector<std::thread> threads;
  };
  void run(Pool& pool, bool overflow);

  std::size_t max_waiting_;
  std::mutex mutex_;
  std::condition_variable wake_;
  bool shutting_down_ = false;
  Pool workers_;
  Pool overflow_;
};

}  // namespace planckton::server

// Counters and a latency histogram, written in the Prometheus text exposition format 0.0.4.
#pragma once

#include <array>
#include <map>
#include <mutex>
#include <string>
#include <utility>

namespace planckton::server {

class Metrics {
 public:
  Metrics();
  void record_request(const std::string& route, int status, double seconds);
  void record_fit(const std::string& model);
  void record_failed_fit(const std::string& reason);
  std::string exposition() const;

 private:
  // Upper bounds of the latency buckets, s (plus +Inf).
  static constexpr std::array<double, 14> kBuckets = {0.0005, 0.001, 0.0025, 0.005, 0.01, 0.025, 0.05,
                                                      0.1, 0.25, 0.5, 1.0, 2.5, 5.0, 10.0};
  struct Histogram {
    std::array<unsigned long long, kBuckets.size()> counts{};
    unsigned long long count = 0;
    double sum = 0.0;
  };
  mutable std::mutex mutex_;
  std::map<std::pair<std::string, int>, unsigned long long> requests_;
  std::map<std::string, Histogram> latency_;
  std::map<std::string, unsigned long long> fits_;
  std::map<std::string, unsigned long long> failed_fits_;
};

}  // namespace planckton::server

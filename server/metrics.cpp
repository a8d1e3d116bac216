#include "metrics.h"

#include <sstream>

namespace planckton::server {

// The series a dashboard expects exist from the start, at zero.
Metrics::Metrics() {
  fits_["planck"] = 0;
  failed_fits_["invalid_input"] = 0;
  failed_fits_["not_converged"] = 0;
}

void Metrics::record_request(const std::string& route, int status, double seconds) {
  const std::lock_guard lock(mutex_);
  ++requests_[{route, status}];
  Histogram& h = latency_[route];
  for (std::size_t i = 0; i < kBuckets.size(); ++i) {
    if (seconds <= kBuckets[i]) ++h.counts[i];
  }
  ++h.count;
  h.sum += seconds;
}

void Metrics::record_fit(const std::string& model) {
  const std::lock_guard lock(mutex_);
  ++fits_[model];
}

void Metrics::record_failed_fit(const std::string& reason) {
  const std::lock_guard lock(mutex_);
  ++failed_fits_[reason];
}

// Prometheus text exposition format 0.0.4 (prometheus.io, "Exposition formats"): HELP and TYPE
// lines, then one sample per line; histogram buckets are cumulative with an le label.
std::string Metrics::exposition() const {
  const std::lock_guard lock(mutex_);
  std::ostringstream out;
  out << "# HELP planckton_http_requests_total HTTP requests answered, by route and status.\n"
      << "# TYPE planckton_http_requests_total counter\n";
  for (const auto& [key, count] : requests_) {
    out << "planckton_http_requests_total{route=\"" << key.first << "\",status=\"" << key.second << "\"} " << count << '\n';
  }
  out << "# HELP planckton_http_request_duration_seconds Time to answer a request, by route.\n"
      << "# TYPE planckton_http_request_duration_seconds histogram\n";
  for (const auto& [route, h] : latency_) {
    for (std::size_t i = 0; i < kBuckets.size(); ++i) {
      out << "planckton_http_request_duration_seconds_bucket{route=\"" << route << "\",le=\"" << kBuckets[i] << "\"} "
          << h.counts[i] << '\n';
    }
    out << "planckton_http_request_duration_seconds_bucket{route=\"" << route << "\",le=\"+Inf\"} " << h.count << '\n'
        << "planckton_http_request_duration_seconds_sum{route=\"" << route << "\"} " << h.sum << '\n'
        << "planckton_http_request_duration_seconds_count{route=\"" << route << "\"} " << h.count << '\n';
  }
  out << "# HELP planckton_fits_total Fits answered with a result, by model.\n"
      << "# TYPE planckton_fits_total counter\n";
  for (const auto& [model, count] : fits_) out << "planckton_fits_total{model=\"" << model << "\"} " << count << '\n';
  out << "# HELP planckton_fits_failed_total Fits that could not be answered with a converged result, by reason.\n"
      << "# TYPE planckton_fits_failed_total counter\n";
  for (const auto& [reason, count] : failed_fits_) {
    out << "planckton_fits_failed_total{reason=\"" << reason << "\"} " << count << '\n';
  }
  return out.str();
}

}  // namespace planckton::server

// POST /v1/fit/batch (application/x-ndjson): one JSON request per line, each answered with its own
// line by api::fit_batch_line, which never throws for bad input.
//
// The body is split as the server splits it (server/routes.cpp, Routes::split_lines, private to the
// server and restated here: lines at '\n', blank lines (spaces, tabs, '\r') skipped, the 0-based line
// number as the index), with the server's limit on lines. Each line is given to fit_batch_line with
// a limit of one point, so that a request of two or more points is read, checked and answered with
// its 413 line where its fit would start; a line that is a request of fewer points is only read (it
// would be fitted). Every answer line must be a 4xx with a problem, and must serialise as the server
// writes it; the requests read are then prepared as fit_outcome prepares them.
#include "fuzz_support.h"

#include <vector>

#include "api/fit_request.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace planckton;
  if (size > fuzz::kMaxBodyBytes) return -1;
  const std::string_view body = fuzz::as_text(data, size);
  struct Line {
    std::size_t index;
    std::string_view text;
  };
  std::vector<Line> lines;
  for (std::size_t start = 0, index = 0; start <= body.size(); ++index) {
    std::size_t end = body.find('\n', start);
    if (end == std::string_view::npos) end = body.size();
    const std::string_view line = body.substr(start, end - start);
    if (line.find_first_not_of(" \t\r") != std::string_view::npos) lines.push_back({index, line});
    start = end + 1;
  }
  if (lines.size() > fuzz::kMaxBatchLines) return 0;  // the server answers 413 for the whole batch
  for (const Line& line : lines) {
    std::optional<api::FitRequest> request;
    try {
      request = api::parse_fit_request(line.text);
    } catch (const api::ProblemError& e) {
      fuzz::check_problem(e.problem());
    }
    const std::size_t points =
        !request ? 2 : request->photometry ? request->photometry->input.measurements.size() : request->spectrum.x.size();
    if (points >= 2) {
      const nlohmann::ordered_json answer = api::fit_batch_line(line.text, line.index, fuzz::kStopBeforeFit);
      const int status = answer.at("status").get<int>();
      if (status < 400 || status > 499 || !answer.contains("problem") || answer.at("index") != line.index) __builtin_trap();
      if (fuzz::json_text(answer).empty()) __builtin_trap();
    }
    if (request) fuzz::prepare_like_fit_outcome(std::move(*request), fuzz::kServerLimits);
  }
  return 0;
}

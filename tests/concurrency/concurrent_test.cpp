// The library called from several threads at once, as the server's workers call it: every answer is
// the one a single thread gets, byte for byte. These tests are their own executable
// (planckton-concurrency-tests) so that the ThreadSanitizer stage of scripts/test-sanitizers can build
// and run them without the rest of the unit tests. What they share between threads: the passband
// quadrature cache of core/science/photometry.cpp (a map behind a mutex), the per-thread JSON parser of
// core/api/json_reader.cpp, and cfitsio, which must be built reentrant (fits_is_reentrant; Debian's
// is). The documents are the samples in sample-spectra/.
#include <gtest/gtest.h>

#include <fitsio.h>

#include <cstddef>
#include <fstream>
#include <iterator>
#include <string>
#include <thread>
#include <vector>

#include "api/fit_service.h"
#include "api/fits_reader.h"
#include "api/problem.h"

namespace {

using planckton::api::ProblemError;

std::string read_sample(const std::string& name) {
  std::ifstream file(std::string(PLANCKTON_SAMPLES_DIR) + "/" + name, std::ios::binary);
  EXPECT_TRUE(file) << "cannot open sample-spectra/" << name;
  return {std::istreambuf_iterator<char>(file), std::istreambuf_iterator<char>()};
}

constexpr std::size_t kThreads = 4;

// Runs work(thread, round) on kThreads threads for the given rounds each; the failures it counted.
template <typename Work>
std::vector<int> on_threads(int rounds, Work work) {
  std::vector<int> failures(kThreads, 0);
  std::vector<std::thread> threads;
  for (std::size_t t = 0; t < kThreads; ++t) {
    threads.emplace_back([&, t] {
      for (int round = 0; round < rounds; ++round) failures[t] += work(t, round) ? 0 : 1;
    });
  }
  for (std::thread& thread : threads) thread.join();
  return failures;
}

// JSON spectra and photometry (catalogue bands, whose quadratures are cached, and a curve of the
// request's own), several documents in flight at once. The threads go first, so that they also fill
// the cache together; the single-threaded answers are taken afterwards.
TEST(Concurrent, JsonFitsGiveTheSingleThreadedAnswers) {
  const std::vector<std::string> names = {"tms-0047-hot-star.json", "tms-0289-hot-star-photometry.json",
                                          "tms-0351-reddened-star.json", "ql3-bench-lamp.json"};
  std::vector<std::string> documents;
  for (const std::string& name : names) documents.push_back(read_sample(name));
  constexpr int kRounds = 8;
  std::vector<std::vector<std::string>> answers(kThreads, std::vector<std::string>(kRounds));
  const auto which = [&](std::size_t thread, int round) {
    return (thread + static_cast<std::size_t>(round)) % documents.size();
  };
  on_threads(kRounds, [&](std::size_t thread, int round) {
    const std::string& document = documents[which(thread, round)];
    answers[thread][static_cast<std::size_t>(round)] = planckton::api::fit_json_text(document).dump();
    return true;
  });
  std::vector<std::string> expected;
  for (const std::string& document : documents) expected.push_back(planckton::api::fit_json_text(document).dump());
  for (std::size_t thread = 0; thread < kThreads; ++thread) {
    for (int round = 0; round < kRounds; ++round) {
      EXPECT_EQ(answers[thread][static_cast<std::size_t>(round)], expected[which(thread, round)])
          << "thread " << thread << ", round " << round << ": " << names[which(thread, round)];
    }
  }
}

// FITS spectra read at once, good and truncated: the same values, and the same 400 for the damaged.
TEST(Concurrent, FitsReadsAgree) {
  ASSERT_TRUE(fits_is_reentrant());
  const std::string image = read_sample("tms-0047-hot-star.fits");
  const std::string broken = image.substr(0, image.size() / 2);
  const std::vector<double> expected = planckton::api::read_fits(image, {}).spectrum->y;
  const auto failures = on_threads(100, [&](std::size_t, int) {
    if (planckton::api::read_fits(image, {}).spectrum->y != expected) return false;
    try {
      planckton::api::read_fits(broken, {});
      return false;
    } catch (const ProblemError& e) {
      return e.problem().status == 400;
    }
  });
  EXPECT_EQ(failures, std::vector<int>(kThreads, 0));
}

}  // namespace

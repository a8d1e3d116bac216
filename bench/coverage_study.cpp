// planckton-coverage: the frequentist coverage of the three interval methods of model_intervals.h
// (covariance, profile, posterior) for a Planck fit's temperature, on simulated spectra (issue 6).
//
//   planckton-coverage [--spectra N] [--posterior-spectra N] [--methods covariance,profile,posterior]
//                      [--regimes peak,wien,rj] [--threads 2] [--seed S] [--walkers W] [--steps S]
//                      [--burn-in B] [--sigma REGIME=F] [--temperature-bounds LO,HI] [--prior jeffreys|flat]
//                      [--small] [--check]
//
// Prints markdown tables on standard output; exit 0, or with --check 1 when a target is missed (2 for
// bad arguments). --small is the fast version the tests run: 400 spectra per regime, the posterior
// (with the service's default chain) on the first 150 of them, the check's bands widened by three
// binomial standard errors.
//
// Simulation. A black body of T = 6,000 K subtending 6.8e-17 sr, fitted as ModelSpec{} (plain Planck,
// temperature and scale free, default bounds T in 0.1 K - 1e9 K, scale > 0), observed as F_nu (Jy)
// at points evenly spaced in ln lambda with Gaussian errors of known sigma (passed as y_error):
//
//   peak   0.2 - 3 um, 30 points      the F_nu peak (0.85 um) inside;  sigma 5 % of each point
//   wien   0.2 - 0.35 um, 20 points   x = h nu / k T = 6.9 - 12;       sigma constant, 0.5 x the
//                                     brightest point's flux (S/N 2 at 0.35 um, 0.06 at 0.2 um)
//   rj     15 - 100 um, 30 points     x = 0.024 - 0.16;                sigma 10 % of each point
//
// (--sigma REGIME=F replaces the 5 %, 0.5 or 10 %.) Each spectrum is fitted once (fit_model) and every
// method runs on that fit, so the methods are compared on identical data. Spectrum k of regime r
// has its own SplitMix64 stream (bench/synthetic_spectrum.h) seeded from (seed, r, k), its posterior
// its own sampler seed, and every result its own slot: the tables are the same bit for bit whatever
// the number of threads.
//
// Counting, per regime and method, at each level (68.27 %, 95.45 %). An interval covers when it
// contains the true temperature. An end that is NaN is open (profile_likelihood.h: the profile did
// not rise by the threshold before the parameter's bound), so an interval with an open upper end is
// the half-line [lower, inf) and covers when T_true >= lower. Intervals with exactly one open end are
// the reported one-sided limits, also counted apart against their stated one-sided level (84.13 % at
// Delta = 1, 97.72 % at Delta = 4). Every finite lower end is also read as a one-sided lower limit at
// those levels (the lower end of a two-sided 68.27 % interval is an 84.13 % lower limit). Fits that
// throw or do not converge, and methods that throw or return no interval, are failures: counted,
// shown, and left out of the coverage. Posterior chains with more than 1 % of their draws where the
// model is below 1 % of sigma at every point (the S -> 0 plateau: there the likelihood is constant
// and the prior flat in ln S) are counted, as are posteriors whose 97.72 % percentile lies within a
// factor 10 of the upper temperature bound.
//
// --check: profile and posterior cover 66-71 % and 94-97 % in the peak and wien regimes; in the rj
// regime at least a quarter of the profile's 95 % intervals are one-sided (the regime is what it
// claims), and the lower ends of the profile's and the posterior's intervals hold at least at their
// stated one-sided levels less three binomial standard errors; profile and posterior fail at most
// 1 % of the time. The reported one-sided limits taken alone and the posterior's two-sided coverage
// in the rj regime are shown but not checked; neither are covariance intervals: the table shows
// where they fail. --prior flat samples the flat prior instead of Jeffreys' (model_intervals.h).
#include <algorithm>
#include <array>
#include <atomic>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <limits>
#include <map>
#include <optional>
#include <sstream>
#include <string>
#include <thread>
#include <vector>

#include "science/derived_quantities.h"
#include "science/model_fit.h"
#include "science/model_intervals.h"
#include "science/planck.h"
#include "science/profile_likelihood.h"
#include "science/spectrum.h"
#include "synthetic_spectrum.h"

namespace {

using namespace planckton;

constexpr double kTrueTemperature = 6000.0;  // K
constexpr double kTrueSolidAngle = 6.8e-17;  // sr
constexpr double kSpeedOfLight = 299792458.0;
constexpr double kJanskySi = 1e-26;
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

struct Regime {
  std::string name;
  std::string description;
  double lo_um, hi_um;
  int points;
  bool constant_sigma;  // sigma = noise * the brightest point's true flux; else noise * each point's
  double noise;
};

std::vector<Regime> default_regimes() {
  return {{"peak", "peak inside the data (F_nu peaks at 0.85 um)", 0.2, 3.0, 30, false, 0.05},
          {"wien", "Wien side only (x = 6.9-12), low S/N", 0.2, 0.35, 20, true, 0.5},
          {"rj", "Rayleigh-Jeans side only (x = 0.024-0.16)", 15.0, 100.0, 30, false, 0.10}};
}

enum class Method { kCovariance, kProfile, kPosterior };
constexpr std::array<Method, 3> kAllMethods = {Method::kCovariance, Method::kProfile, Method::kPosterior};
const char* method_name(Method m) {
  switch (m) {
    case Method::kCovariance: return "covariance";
    case Method::kProfile: return "profile";
    case Method::kPosterior: return "posterior";
  }
  return "?";
}

struct Settings {
  std::vector<Regime> regimes = default_regimes();
  std::size_t spectra = 2000;
  std::size_t posterior_spectra = 0;  // 0: as many as spectra
  std::vector<Method> methods = {kAllMethods.begin(), kAllMethods.end()};
  std::vector<std::size_t> chosen = {0, 1, 2};  // indices into regimes
  unsigned threads = 2;
  std::uint64_t seed = 20260601;
  EnsembleSamplerOptions sampler = default_posterior_sampler();
  PosteriorPrior prior = PosteriorPrior::kJeffreys;
  std::optional<std::array<double, 2>> temperature_bounds;  // K; default PlanckFitOptions' (0.1 K - 1e9 K)
  bool small = false;
  bool check = false;

  std::size_t spectra_for(Method m) const {
    return m == Method::kPosterior && posterior_spectra > 0 ? std::min(posterior_spectra, spectra) : spectra;
  }
  double max_temperature() const { return temperature_bounds ? (*temperature_bounds)[1] : PlanckFitOptions{}.max_temperature_k; }
};

// ----- simulation ------------------------------------------------------------------------------

std::uint64_t mix(std::uint64_t z) {  // SplitMix64's finaliser
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
  return z ^ (z >> 31);
}

std::uint64_t spectrum_seed(std::uint64_t seed, std::size_t regime, std::size_t k) {
  return mix(mix(seed + 0x9E3779B97F4A7C15ULL * (regime + 1)) + 0xD1B54A32D192ED03ULL * (k + 1));
}

SpectrumInput simulate(const Regime& regime, std::uint64_t seed) {
  SpectrumInput input;
  input.x_unit = "um";
  input.y_unit = "Jy";
  std::vector<double> truth;
  for (int i = 0; i < regime.points; ++i) {
    const double um = regime.lo_um * std::pow(regime.hi_um / regime.lo_um, static_cast<double>(i) / (regime.points - 1));
    input.x.push_back(um);
    truth.push_back(kTrueSolidAngle * planck_per_frequency(kSpeedOfLight / (um * 1e-6), kTrueTemperature) / kJanskySi);
  }
  const double brightest = *std::max_element(truth.begin(), truth.end());
  bench::SplitMix64 random(seed);
  for (double f : truth) {
    const double sigma = regime.noise * (regime.constant_sigma ? brightest : f);
    input.y.push_back(f + sigma * random.normal());
    input.y_error.push_back(sigma);
  }
  return input;
}

// ----- one spectrum ----------------------------------------------------------------------------

enum class Status { kOk, kFitException, kFitNotConverged, kIntervalException, kNoInterval };

struct Outcome {
  Status status = Status::kOk;
  std::string message;
  std::array<double, 2> lo{kNaN, kNaN}, hi{kNaN, kNaN};  // per level; NaN: open
  bool chain_not_converged = false;
  bool minimum_moved = false;
  bool on_plateau = false;     // posterior: > 1 % of the draws invisible in the data
  bool reaches_bound = false;  // posterior: the 97.72 % percentile within a factor 10 of the T bound
  double seconds = 0.0;
};

// The fraction of (thinned) draws (T, S) whose model stays below 1 % of sigma at every point.
double invisible_fraction(const MeasuredSpectrum& spectrum, const std::vector<std::vector<double>>& draws) {
  if (draws.empty()) return 0.0;
  std::size_t invisible = 0;
  for (const std::vector<double>& d : draws) {
    bool seen = false;
    for (std::size_t i = 0; i < spectrum.size() && !seen; ++i) {
      seen = d[1] * planck_per_frequency(spectrum.frequency_hz[i], d[0]) >= 0.01 * spectrum.error_si[i];
    }
    invisible += !seen;
  }
  return static_cast<double>(invisible) / static_cast<double>(draws.size());
}

// Fits spectrum k of chosen regime r and runs every method that covers k: one Outcome per method of
// settings.methods, in that order.
std::vector<Outcome> run_spectrum(const Settings& settings, std::size_t r, std::size_t k) {
  std::vector<Outcome> out(settings.methods.size());
  const std::size_t regime_index = settings.chosen[r];
  const std::uint64_t seed = spectrum_seed(settings.seed, regime_index, k);
  const ModelSpec spec;
  ModelFitOptions options;
  if (settings.temperature_bounds) {
    options.solver.min_temperature_k = (*settings.temperature_bounds)[0];
    options.solver.max_temperature_k = (*settings.temperature_bounds)[1];
  }
  const auto fail_all = [&](Status status, const std::string& message) {
    for (Outcome& o : out) {
      o.status = status;
      o.message = message;
    }
    return out;
  };
  std::optional<MeasuredSpectrum> spectrum;
  std::optional<ModelData> data;
  std::optional<ModelFitResult> fit;
  try {
    spectrum = prepare_spectrum(simulate(settings.regimes[regime_index], seed));
    data = model_data(*spectrum);
    fit = fit_model(*data, spec, options);
  } catch (const std::exception& e) {
    return fail_all(Status::kFitException, e.what());
  }
  if (!fit->converged) return fail_all(Status::kFitNotConverged, fit->termination);
  std::size_t t_index = 0;
  while (fit->parameters[t_index].info.name != "temperature") ++t_index;

  for (std::size_t m = 0; m < settings.methods.size(); ++m) {
    const Method method = settings.methods[m];
    if (k >= settings.spectra_for(method)) continue;
    Outcome& o = out[m];
    IntervalOptions intervals;
    intervals.method = method == Method::kCovariance ? IntervalMethod::kCovariance
                       : method == Method::kProfile  ? IntervalMethod::kProfile
                                                     : IntervalMethod::kPosterior;
    intervals.sampler = settings.sampler;
    intervals.prior = settings.prior;
    intervals.sampler.seed = mix(seed ^ 0x5DEECE66DULL);
    if (method == Method::kPosterior) intervals.samples_returned = 5000;  // for the plateau diagnostic
    const auto begin = std::chrono::steady_clock::now();
    try {
      const ModelIntervals result = model_intervals(*data, *fit, options, intervals, spectrum->y_unit, std::nullopt, std::nullopt);
      const Estimate& t = result.quantities.parameters[t_index];
      if (!t.interval_68 || !t.interval_95) {
        o.status = Status::kNoInterval;
        o.message = "no interval";
      } else {
        o.lo = {(*t.interval_68)[0], (*t.interval_95)[0]};
        o.hi = {(*t.interval_68)[1], (*t.interval_95)[1]};
      }
      o.minimum_moved = result.profile_found_lower_minimum;
      if (result.chain) {
        o.chain_not_converged = !result.chain->converged;
        o.on_plateau = invisible_fraction(*spectrum, result.returned_samples) > 0.01;
        o.reaches_bound = o.hi[1] > settings.max_temperature() / 10.0;
      }
    } catch (const std::exception& e) {
      o.status = Status::kIntervalException;
      o.message = e.what();
    }
    o.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - begin).count();
  }
  return out;
}

// ----- tallies ---------------------------------------------------------------------------------

struct Tally {
  std::size_t n = 0, ok = 0;
  std::map<Status, std::size_t> failures;
  std::array<std::size_t, 2> covered{}, miss_low{}, miss_high{};
  std::array<std::size_t, 2> one_sided{}, one_sided_holds{};  // exactly one open end
  std::array<std::size_t, 2> lower_end{}, lower_end_holds{};  // every finite lower end, as a one-sided limit
  std::size_t chain_not_converged = 0, minimum_moved = 0, on_plateau = 0, reaches_bound = 0;
  double seconds = 0.0;
  std::vector<double> lower_68, upper_68;  // the 68 % ends over T_true; an open end as 0 or +inf

  void add(const Outcome& o) {
    ++n;
    seconds += o.seconds;
    if (o.status != Status::kOk) {
      ++failures[o.status];
      return;
    }
    ++ok;
    chain_not_converged += o.chain_not_converged;
    minimum_moved += o.minimum_moved;
    on_plateau += o.on_plateau;
    reaches_bound += o.reaches_bound;
    const double truth = kTrueTemperature;
    lower_68.push_back(std::isnan(o.lo[0]) ? 0.0 : o.lo[0] / truth);
    upper_68.push_back(std::isnan(o.hi[0]) ? HUGE_VAL : o.hi[0] / truth);
    for (std::size_t level = 0; level < 2; ++level) {
      const bool lo_open = std::isnan(o.lo[level]), hi_open = std::isnan(o.hi[level]);
      const bool above_lo = lo_open || truth >= o.lo[level], below_hi = hi_open || truth <= o.hi[level];
      covered[level] += above_lo && below_hi;
      miss_low[level] += !above_lo;   // T_true lies below the interval
      miss_high[level] += !below_hi;  // above it
      if (!lo_open) {
        ++lower_end[level];
        lower_end_holds[level] += above_lo;
      }
      if (lo_open != hi_open) {
        ++one_sided[level];
        one_sided_holds[level] += above_lo && below_hi;
      }
    }
  }
  std::size_t failed() const { return n - ok; }
};

double fraction(std::size_t k, std::size_t n) { return n > 0 ? static_cast<double>(k) / static_cast<double>(n) : kNaN; }
double binomial_se(double p, std::size_t n) { return n > 0 ? std::sqrt(p * (1.0 - p) / static_cast<double>(n)) : kNaN; }

double median(std::vector<double> v) {
  if (v.empty()) return kNaN;
  std::sort(v.begin(), v.end());
  const std::size_t h = v.size() / 2;
  return v.size() % 2 ? v[h] : 0.5 * (v[h - 1] + v[h]);
}

std::string format(const char* pattern, auto... values) {
  char buffer[256];
  std::snprintf(buffer, sizeof buffer, pattern, values...);
  return buffer;
}

std::string percent_se(std::size_t k, std::size_t n) {
  if (n == 0) return "-";
  const double p = fraction(k, n);
  return format("%.1f ± %.1f %%", 100.0 * p, 100.0 * binomial_se(p, n));
}

std::string count_percent(std::size_t k, std::size_t n) {
  return n == 0 ? std::string("-") : format("%zu: %.1f %%", n, 100.0 * fraction(k, n));
}

std::string pair_percent(std::size_t a, std::size_t na, std::size_t b, std::size_t nb) {
  if (na == 0 && nb == 0) return "-";
  return format("%.1f / %.1f %%", 100.0 * fraction(a, na), 100.0 * fraction(b, nb));
}

const char* status_name(Status s) {
  switch (s) {
    case Status::kOk: return "ok";
    case Status::kFitException: return "fit threw";
    case Status::kFitNotConverged: return "fit not converged";
    case Status::kIntervalException: return "interval threw";
    case Status::kNoInterval: return "no interval";
  }
  return "?";
}

std::string failure_text(const Tally& t) {
  if (t.failed() == 0) return "0";
  std::string s = std::to_string(t.failed()) + " (";
  bool first = true;
  for (const auto& [status, count] : t.failures) {
    s += (first ? "" : ", ") + std::to_string(count) + " " + status_name(status);
    first = false;
  }
  return s + ")";
}

std::string notes_text(const Tally& t) {
  std::vector<std::string> notes;
  if (t.chain_not_converged) notes.push_back(std::to_string(t.chain_not_converged) + " chains not converged");
  if (t.on_plateau) notes.push_back(std::to_string(t.on_plateau) + " chains on the S → 0 plateau");
  if (t.reaches_bound) notes.push_back(std::to_string(t.reaches_bound) + " reach the T bound");
  if (t.minimum_moved) notes.push_back(std::to_string(t.minimum_moved) + " profiles found a lower minimum");
  std::string s;
  for (const std::string& note : notes) s += (s.empty() ? "" : "; ") + note;
  return s;
}

// ----- checks ----------------------------------------------------------------------------------

struct Check {
  std::string what;
  bool passed;
};

void check_failures(const Settings& settings, const std::string& label, const Tally& t, std::vector<Check>& checks) {
  const double n = static_cast<double>(t.n);
  const double allowed = 0.01 * n + (settings.small ? 3.0 * std::sqrt(0.01 * 0.99 * n) : 0.0);
  checks.push_back({format("%s: %zu failure(s) of %zu (at most %.0f)", label.c_str(), t.failed(), t.n, std::floor(allowed)),
                    static_cast<double>(t.failed()) <= allowed});
}

void check_coverage(const Settings& settings, const std::string& label, const Tally& t, std::vector<Check>& checks) {
  constexpr std::array<std::array<double, 2>, 2> kBands = {{{0.66, 0.71}, {0.94, 0.97}}};
  for (std::size_t level = 0; level < 2; ++level) {
    const double widen = settings.small ? 3.0 * binomial_se(kTwoSidedLevels[level], t.ok) : 0.0;
    const double lo = kBands[level][0] - widen, hi = kBands[level][1] + widen;
    const double p = fraction(t.covered[level], t.ok);
    checks.push_back({format("%s: %s coverage %.1f %% in [%.1f, %.1f] %%", label.c_str(), level == 0 ? "68 %" : "95 %",
                             100.0 * p, 100.0 * lo, 100.0 * hi),
                      t.ok > 0 && p >= lo && p <= hi});
  }
}

void check_one_sided_share(const std::string& label, const Tally& t, std::vector<Check>& checks) {
  checks.push_back({format("%s: %zu of %zu 95 %% intervals one-sided (at least a quarter: T bounded from below only)",
                           label.c_str(), t.one_sided[1], t.ok),
                    t.ok > 0 && 4 * t.one_sided[1] >= t.ok});
}

void check_lower_limits(const std::string& label, const Tally& t, std::vector<Check>& checks) {
  for (std::size_t level = 0; level < 2; ++level) {
    const double target = kOneSidedLevels[level];
    const double se = binomial_se(target, t.lower_end[level]);
    const double p = fraction(t.lower_end_holds[level], t.lower_end[level]);
    checks.push_back({format("%s: lower limits at the %s threshold hold %.1f %% of %zu, stated %.2f %% (at least %.1f %%)",
                             label.c_str(), level == 0 ? "68 %" : "95 %", 100.0 * p, t.lower_end[level], 100.0 * target,
                             100.0 * (target - 3.0 * se)),
                      t.lower_end[level] > 0 && p >= target - 3.0 * se});
  }
}

// ----- command line ----------------------------------------------------------------------------

std::vector<std::string> split(const std::string& s) {
  std::vector<std::string> parts;
  std::stringstream stream(s);
  std::string part;
  while (std::getline(stream, part, ',')) {
    if (!part.empty()) parts.push_back(part);
  }
  return parts;
}

int usage(const std::string& message) {
  if (!message.empty()) std::fprintf(stderr, "planckton-coverage: %s\n", message.c_str());
  std::fprintf(stderr,
               "usage: planckton-coverage [--spectra N] [--posterior-spectra N] [--methods covariance,profile,posterior]\n"
               "                          [--regimes peak,wien,rj] [--threads N] [--seed S] [--walkers W] [--steps S]\n"
               "                          [--burn-in B] [--sigma REGIME=F] [--temperature-bounds LO,HI] [--prior jeffreys|flat]\n"
               "                          [--small] [--check]\n");
  return 2;
}

bool parse_count(const char* text, std::size_t& out) {
  char* end = nullptr;
  const unsigned long long v = std::strtoull(text, &end, 10);
  if (end == text || *end != '\0' || v == 0) return false;
  out = static_cast<std::size_t>(v);
  return true;
}

std::string sigma_text(const Regime& g) {
  return g.constant_sigma ? format("constant: %g x the brightest point's flux", g.noise) : format("%g %% of each point's flux", 100.0 * g.noise);
}

}  // namespace

int main(int argc, char** argv) {
  Settings settings;
  bool spectra_given = false, posterior_given = false;
  for (int i = 1; i < argc; ++i) {
    const std::string arg = argv[i];
    const char* value = i + 1 < argc ? argv[i + 1] : nullptr;
    static const std::vector<std::string> kWithValue = {"--spectra", "--posterior-spectra", "--threads", "--walkers",
                                                        "--steps", "--burn-in", "--seed", "--temperature-bounds",
                                                        "--sigma", "--methods", "--regimes", "--prior"};
    if (std::find(kWithValue.begin(), kWithValue.end(), arg) != kWithValue.end()) {
      if (!value) return usage(arg + " needs a value");
      ++i;
    }
    std::size_t n = 0;
    if (arg == "--small") {
      settings.small = true;
    } else if (arg == "--check") {
      settings.check = true;
    } else if (arg == "--help" || arg == "-h") {
      usage("");
      return 0;
    } else if (arg == "--spectra" || arg == "--posterior-spectra" || arg == "--threads" || arg == "--walkers" ||
               arg == "--steps" || arg == "--burn-in" || arg == "--seed") {
      if (!parse_count(value, n)) return usage(arg + " needs a positive integer");
      if (arg == "--spectra") settings.spectra = n, spectra_given = true;
      if (arg == "--posterior-spectra") settings.posterior_spectra = n, posterior_given = true;
      if (arg == "--threads") settings.threads = static_cast<unsigned>(n);
      if (arg == "--seed") settings.seed = n;
      if (arg == "--walkers") settings.sampler.walkers = static_cast<int>(n);
      if (arg == "--steps") settings.sampler.steps = static_cast<int>(n);
      if (arg == "--burn-in") settings.sampler.burn_in = static_cast<int>(n);
    } else if (arg == "--temperature-bounds") {
      double lo = 0.0, hi = 0.0;
      char tail = 0;
      if (std::sscanf(value, "%lf,%lf%c", &lo, &hi, &tail) != 2 || !(lo > 0.0) || !(hi > lo) || !std::isfinite(hi)) {
        return usage("--temperature-bounds needs LO,HI in K with 0 < LO < HI");
      }
      settings.temperature_bounds = std::array<double, 2>{lo, hi};
    } else if (arg == "--sigma") {
      const std::string v = value;
      const std::size_t eq = v.find('=');
      const auto it = std::find_if(settings.regimes.begin(), settings.regimes.end(),
                                   [&](const Regime& r) { return eq != std::string::npos && r.name == v.substr(0, eq); });
      char* end = nullptr;
      const double f = it == settings.regimes.end() ? 0.0 : std::strtod(v.c_str() + eq + 1, &end);
      if (it == settings.regimes.end() || !end || *end != '\0' || !(f > 0.0) || !std::isfinite(f)) {
        return usage("--sigma needs REGIME=F with a known regime and F > 0");
      }
      it->noise = f;
    } else if (arg == "--prior") {
      const std::string v = value;
      if (v != "jeffreys" && v != "flat") return usage("--prior is jeffreys or flat");
      settings.prior = v == "jeffreys" ? PosteriorPrior::kJeffreys : PosteriorPrior::kFlat;
    } else if (arg == "--methods") {
      settings.methods.clear();
      for (const std::string& name : split(value)) {
        const auto it = std::find_if(kAllMethods.begin(), kAllMethods.end(), [&](Method m) { return name == method_name(m); });
        if (it == kAllMethods.end()) return usage("unknown method " + name);
        if (std::find(settings.methods.begin(), settings.methods.end(), *it) == settings.methods.end()) settings.methods.push_back(*it);
      }
      if (settings.methods.empty()) return usage("--methods needs at least one method");
    } else if (arg == "--regimes") {
      settings.chosen.clear();
      for (const std::string& name : split(value)) {
        const auto it = std::find_if(settings.regimes.begin(), settings.regimes.end(), [&](const Regime& r) { return r.name == name; });
        if (it == settings.regimes.end()) return usage("unknown regime " + name);
        const std::size_t index = static_cast<std::size_t>(it - settings.regimes.begin());
        if (std::find(settings.chosen.begin(), settings.chosen.end(), index) == settings.chosen.end()) settings.chosen.push_back(index);
      }
      if (settings.chosen.empty()) return usage("--regimes needs at least one regime");
    } else {
      return usage("unknown argument " + arg);
    }
  }
  if (settings.small) {
    if (!spectra_given) settings.spectra = 400;
    if (!posterior_given) settings.posterior_spectra = 150;
  }
  if (settings.sampler.burn_in >= settings.sampler.steps) return usage("--burn-in must be below --steps");
  const bool with_posterior = std::find(settings.methods.begin(), settings.methods.end(), Method::kPosterior) != settings.methods.end();

  // Every (regime, spectrum) is one task; workers take them from a shared counter and write into the
  // task's own slot, so the result does not depend on the number of threads or their timing.
  const std::size_t regime_count = settings.chosen.size();
  std::vector<std::vector<Outcome>> outcomes(regime_count * settings.spectra);
  std::atomic<std::size_t> next{0};
  const auto begin = std::chrono::steady_clock::now();
  const auto worker = [&] {
    for (std::size_t task; (task = next.fetch_add(1)) < outcomes.size();) {
      outcomes[task] = run_spectrum(settings, task / settings.spectra, task % settings.spectra);
    }
  };
  std::vector<std::thread> pool;
  for (unsigned t = 0; t < std::max(1u, settings.threads); ++t) pool.emplace_back(worker);
  for (std::thread& t : pool) t.join();
  const double wall = std::chrono::duration<double>(std::chrono::steady_clock::now() - begin).count();

  std::vector<std::vector<Tally>> tallies(regime_count, std::vector<Tally>(settings.methods.size()));
  for (std::size_t r = 0; r < regime_count; ++r) {
    for (std::size_t k = 0; k < settings.spectra; ++k) {
      for (std::size_t m = 0; m < settings.methods.size(); ++m) {
        if (k < settings.spectra_for(settings.methods[m])) tallies[r][m].add(outcomes[r * settings.spectra + k][m]);
      }
    }
  }

  const PlanckFitOptions bounds_default;
  const double t_lo = settings.temperature_bounds ? (*settings.temperature_bounds)[0] : bounds_default.min_temperature_k;
  const double t_hi = settings.max_temperature();
  std::printf("## Coverage of the temperature's intervals (planckton-coverage%s)\n\n", settings.small ? " --small" : "");
  std::printf("Truth: T = %.0f K, Omega = %.2g sr; fitted as ModelSpec{} (plain Planck, temperature and scale free; "
              "T bounds %g K - %g K, scale > 0), F_nu in Jy at points evenly spaced in ln lambda, Gaussian noise of known "
              "sigma given as y_error. Seed %llu; one fit per spectrum, every method on that fit.\n\n",
              kTrueTemperature, kTrueSolidAngle, t_lo, t_hi, static_cast<unsigned long long>(settings.seed));
  std::printf("| regime | data | points | sigma |\n|---|---|---|---|\n");
  for (std::size_t r : settings.chosen) {
    const Regime& g = settings.regimes[r];
    std::printf("| %s | %g-%g um: %s | %d | %s |\n", g.name.c_str(), g.lo_um, g.hi_um, g.description.c_str(), g.points,
                sigma_text(g).c_str());
  }
  if (with_posterior) {
    std::printf("\nPosterior: IntervalOptions{kPosterior}, %d walkers x %d steps, %d burn-in (%d kept draws), a seed per "
                "spectrum, on the first %zu spectra of each regime.\n",
                settings.sampler.walkers, settings.sampler.steps, settings.sampler.burn_in,
                settings.sampler.walkers * (settings.sampler.steps - settings.sampler.burn_in),
                settings.spectra_for(Method::kPosterior));
  }
  std::printf("\nCoverage: the fraction of intervals that contain T_true, ± its binomial standard error; an open (NaN) end "
              "counts as open, so an interval open above is the half-line [lower, inf). Reported one-sided: the intervals "
              "with exactly one open end, their number and how often they hold, against the stated one-sided levels.\n\n");
  std::printf("| regime | method | N | 68.3 %% coverage | 95.4 %% coverage | reported one-sided at 68 %% (stated 84.13 %%) | "
              "at 95 %% (stated 97.72 %%) | failures |\n");
  std::printf("|---|---|---|---|---|---|---|---|\n");
  for (std::size_t r = 0; r < regime_count; ++r) {
    for (std::size_t m = 0; m < settings.methods.size(); ++m) {
      const Tally& t = tallies[r][m];
      std::printf("| %s | %s | %zu | %s | %s | %s | %s | %s |\n", settings.regimes[settings.chosen[r]].name.c_str(),
                  method_name(settings.methods[m]), t.n, percent_se(t.covered[0], t.ok).c_str(),
                  percent_se(t.covered[1], t.ok).c_str(), count_percent(t.one_sided_holds[0], t.one_sided[0]).c_str(),
                  count_percent(t.one_sided_holds[1], t.one_sided[1]).c_str(), failure_text(t).c_str());
    }
  }
  std::printf("\nWhere the misses fall, at 68 %% / 95 %%: T_true below the interval, above it; every finite lower end read as "
              "a one-sided lower limit (stated 84.13 %% / 97.72 %%); the median 68 %% interval over T_true.\n\n");
  std::printf("| regime | method | median 68 %% interval / T_true | T_true below | T_true above | lower end holds | notes |\n");
  std::printf("|---|---|---|---|---|---|---|\n");
  for (std::size_t r = 0; r < regime_count; ++r) {
    for (std::size_t m = 0; m < settings.methods.size(); ++m) {
      const Tally& t = tallies[r][m];
      const double mlo = median(t.lower_68), mhi = median(t.upper_68);
      const auto ratio = [](double v) { return v < 100.0 ? format("%.3f", v) : format("%.3g", v); };
      const std::string range = t.ok == 0 ? std::string("-") : ratio(mlo) + " - " + (std::isinf(mhi) ? std::string("open") : ratio(mhi));
      std::printf("| %s | %s | %s | %s | %s | %s | %s |\n", settings.regimes[settings.chosen[r]].name.c_str(),
                  method_name(settings.methods[m]), range.c_str(),
                  pair_percent(t.miss_low[0], t.ok, t.miss_low[1], t.ok).c_str(),
                  pair_percent(t.miss_high[0], t.ok, t.miss_high[1], t.ok).c_str(),
                  pair_percent(t.lower_end_holds[0], t.lower_end[0], t.lower_end_holds[1], t.lower_end[1]).c_str(),
                  notes_text(t).c_str());
    }
  }
  std::printf("\nTime in each method's intervals, summed over the threads:");
  for (std::size_t m = 0; m < settings.methods.size(); ++m) {
    double seconds = 0.0;
    for (std::size_t r = 0; r < regime_count; ++r) seconds += tallies[r][m].seconds;
    std::printf("%s %s %.1f s", m ? "," : "", method_name(settings.methods[m]), seconds);
  }
  std::printf(" (the fits not included). Wall time %.1f s on %u thread%s.\n", wall, settings.threads,
              settings.threads == 1 ? "" : "s");

  if (!settings.check) return 0;
  std::vector<Check> checks;
  for (std::size_t r = 0; r < regime_count; ++r) {
    const std::string& regime = settings.regimes[settings.chosen[r]].name;
    for (std::size_t m = 0; m < settings.methods.size(); ++m) {
      const Method method = settings.methods[m];
      if (method == Method::kCovariance) continue;
      const std::string label = regime + " " + method_name(method);
      const Tally& t = tallies[r][m];
      check_failures(settings, label, t, checks);
      if (regime != "rj") {
        check_coverage(settings, label, t, checks);
      } else {
        if (method == Method::kProfile) check_one_sided_share(label, t, checks);
        check_lower_limits(label, t, checks);
      }
    }
  }
  bool passed = true;
  std::printf("\nChecks%s:\n\n", settings.small ? " (bands widened by 3 binomial standard errors)" : "");
  for (const Check& c : checks) {
    std::printf("- %s %s\n", c.passed ? "pass" : "**FAIL**", c.what.c_str());
    passed = passed && c.passed;
  }
  std::printf("\n%s\n", passed ? "All checks passed." : "Some checks failed.");
  return passed ? 0 : 1;
}

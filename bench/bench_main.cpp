// planckton-bench: Google Benchmark programs for the fitting engine.
//
//   planckton-bench                          run every benchmark
//   planckton-bench --dump-spectrum=1000     print the spectrum BM_FitSpectrum/1000 fits, as CSV
//
// bench/curve_fit_side_by_side.py runs both and times scipy.optimize.curve_fit on the same data.
#include <benchmark/benchmark.h>
#include <malloc.h>

#include <cstdio>
#include <cstring>
#include <functional>
#include <vector>
#include <string>

#include <cmath>

#include "science/derived_quantities.h"
#include "science/ensemble_sampler.h"
#include "science/extinction.h"
#include "science/model_fit.h"
#include "science/model_intervals.h"
#include "science/model_quantities.h"
#include "science/photometry_fit.h"
#include "science/planck.h"
#include "science/planck_fit.h"
#include "synthetic_spectrum.h"

namespace {

using namespace planckton;

// A complete fit as a request needs it: preparation (unit conversion), start, solve, covariance,
// derived quantities.
void BM_FitSpectrum(benchmark::State& state) {
  const SpectrumInput input = bench::synthetic_spectrum(static_cast<int>(state.range(0)));
  const PlanckFitOptions options;
  for (auto _ : state) {
    const MeasuredSpectrum spectrum = prepare_spectrum(input);
    const PlanckFitResult fit = fit_planck(spectrum, options);
    const DerivedQuantities derived = derive_quantities(fit, spectrum.y_unit, std::nullopt);
    benchmark::DoNotOptimize(derived.temperature_k.value);
  }
}
BENCHMARK(BM_FitSpectrum)->Arg(100)->Arg(1000)->Arg(10000)->Unit(benchmark::kMicrosecond);

// A catalogue SED of a 5,800 K star in 10 bands (Johnson-Cousins UBVRI, 2MASS JHKs, WISE W1 and
// W2), AB magnitudes with 0.02 mag errors: preparation (the shipped bands' quadratures are cached
// per process, as in the service), start, solve, covariance, derived quantities. Target (issue):
// <= 20 us.
void BM_FitPhotometry(benchmark::State& state) {
  static const char* kBands[] = {"johnson-u", "johnson-b", "johnson-v", "cousins-r", "cousins-i",
                                 "2mass-j",   "2mass-h",   "2mass-ks",  "wise-w1",   "wise-w2"};
  PhotometryInput input;
  for (int b = 0; b < state.range(0); ++b) {
    const Passband& band = *find_builtin_passband(kBands[b % 10]);
    const double f_nu = 2e-18 * make_band_quadrature(band, band.quoted).apply([](double nu) {
      return planck_per_frequency(nu, 5800.0);
    });
    BandMeasurementInput m;
    m.band = &band;
    m.value = -2.5 * std::log10(f_nu / (kAbZeroPointJy * kJansky)) + 0.01 * ((b % 3) - 1);
    m.error = 0.02;
    m.unit = "ABmag";
    input.measurements.push_back(m);
  }
  const PlanckFitOptions options;
  const FluxDensityUnit jansky = parse_flux_density_unit("Jy");
  for (auto _ : state) {
    const MeasuredPhotometry data = prepare_photometry(input);
    const PhotometryFitResult fit = fit_planck_photometry(data, options);
    const DerivedQuantities derived = derive_quantities(fit.fit, jansky, std::nullopt);
    benchmark::DoNotOptimize(derived.temperature_k.value);
  }
}
BENCHMARK(BM_FitPhotometry)->Arg(10)->Unit(benchmark::kMicrosecond);

// The floor: one evaluation of the model at every point.
void BM_PlanckEvaluation(benchmark::State& state) {
  const SpectrumInput input = bench::synthetic_spectrum(static_cast<int>(state.range(0)));
  const MeasuredSpectrum spectrum = prepare_spectrum(input);
  for (auto _ : state) {
    double sum = 0.0;
    for (double nu : spectrum.frequency_hz) sum += planck_radiance(Convention::kEnergyPerWavelength, nu, 5800.0);
    benchmark::DoNotOptimize(sum);
  }
}
BENCHMARK(BM_PlanckEvaluation)->Arg(1000)->Unit(benchmark::kMicrosecond);

// Intervals from the posterior (science/model_intervals.h): the fit of BM_FitSpectrum's spectrum as
// a 2-parameter model fit (preparation, start, solve, covariance), then model_intervals as the
// service runs it (Jeffreys' prior, whose Jacobian every evaluation computes; pivot coordinates)
// with 10,000 kept draws: 16 walkers x (200 burn-in + 625 kept) steps, 13,216 evaluations of ln p
// over the 1,000 points, and the percentiles of every parameter and derived quantity. Target
// (issue): under 1 s per posterior on one core.
void BM_PosteriorSamples(benchmark::State& state) {
  const SpectrumInput input = bench::synthetic_spectrum(static_cast<int>(state.range(0)));
  const ModelFitOptions fit_options;
  IntervalOptions intervals;  // the service's posterior: Jeffreys' prior, pivot coordinates
  intervals.method = IntervalMethod::kPosterior;
  intervals.sampler.walkers = 16;
  intervals.sampler.burn_in = 200;
  intervals.sampler.steps = 200 + 625;
  for (auto _ : state) {
    const MeasuredSpectrum spectrum = prepare_spectrum(input);
    const ModelData data = model_data(spectrum);
    const ModelFitResult fit = fit_model(data, ModelSpec{}, fit_options);
    const ModelIntervals result = model_intervals(data, fit, fit_options, intervals, spectrum.y_unit, {}, {});
    benchmark::DoNotOptimize(result.quantities.parameters.data());
    if (!result.chain || result.chain->evaluations < 13216) state.SkipWithError("fewer evaluations than 10,000 draws need");
  }
}
BENCHMARK(BM_PosteriorSamples)->Arg(1000)->Unit(benchmark::kMillisecond);

// Profile-likelihood intervals (science/profile_likelihood.h) of the same 2-parameter fit of
// BM_FitSpectrum's 1,000 points: the fit through the model engine, the profiles of both parameters
// at Delta = 1 and 4 on both sides, and the derived quantities over the profile points. Target
// (issue): at most 20x the plain fit (BM_FitSpectrum/1000, in the same run).
void BM_ProfileIntervals(benchmark::State& state) {
  const SpectrumInput input = bench::synthetic_spectrum(static_cast<int>(state.range(0)));
  const ModelFitOptions fit_options;
  IntervalOptions intervals;
  intervals.method = IntervalMethod::kProfile;
  for (auto _ : state) {
    const MeasuredSpectrum spectrum = prepare_spectrum(input);
    const ModelData data = model_data(spectrum);
    const ModelFitResult fit = fit_model(data, ModelSpec{}, fit_options);
    const ModelIntervals result = model_intervals(data, fit, fit_options, intervals, spectrum.y_unit, std::nullopt, std::nullopt);
    benchmark::DoNotOptimize(result.quantities.parameters.front().interval_68);
    state.counters["profiles"] = static_cast<double>(result.profile_evaluations);
  }
}
BENCHMARK(BM_ProfileIntervals)->Arg(1000)->Unit(benchmark::kMicrosecond);

// The model family: a complete fit (preparation, start search, solve, covariance, derived
// quantities) of 1,000 points simulated from the model itself with 1 % noise, for every kind, and
// for the stellar kinds with CCM89 extinction (E(B-V) = 0.3) as well. Target (issue): extinction at
// most doubles the cost of the same model without it. The dust kinds have no extinction variant:
// no law reaches the far infrared they are fitted in.
struct ModelCase {
  const char* name;
  ModelSpec spec;
  double lo_um, hi_um;
  std::function<double(double)> f_nu;  // the true F_nu (W m^-2 Hz^-1) at nu (Hz)
};

std::vector<ModelCase> model_cases() {
  const auto reddened = [](ModelSpec spec) {
    spec.extinction = ExtinctionSpec{ExtinctionLaw::kCardelli1989, 3.1};
    return spec;
  };
  const auto redden = [](std::function<double(double)> f) {
    return [f](double nu) {
      return f(nu) * std::pow(10.0, -0.4 * 0.3 * 3.1 * extinction_ratio(ExtinctionLaw::kCardelli1989, 299792458.0 / nu, 3.1));
    };
  };
  ModelSpec planck, diluted, thin, general, two;
  diluted.kind = ModelKind::kDilutedPlanck;
  diluted.angular_radius = AngularRadius{2e-11, 0.0};
  thin.kind = general.kind = ModelKind::kModifiedBlackBody;
  general.opacity = DustOpacity::kGeneral;
  two.kind = ModelKind::kTwoTemperature;
  const auto star = [](double nu) { return 6.8e-17 * planck_per_frequency(nu, 5800.0); };
  const auto photosphere = [](double nu) { return 3.14159 * 4e-22 * 0.3 * planck_per_frequency(nu, 9000.0); };
  const auto binary = [](double nu) { return 4e-18 * planck_per_frequency(nu, 3500.0) + 2e-20 * planck_per_frequency(nu, 11000.0); };
  const auto cold = [](double nu) { return 3e-9 * std::pow(nu / 1e12, 1.8) * planck_per_frequency(nu, 18.0); };
  const auto thick = [](double nu) { return 1e-10 * -std::expm1(-std::pow(nu / 1.5e12, 2.0)) * planck_per_frequency(nu, 40.0); };
  return {{"planck", planck, 0.3, 2.5, star},
          {"planck+extinction", reddened(planck), 0.3, 2.5, redden(star)},
          {"diluted_planck", diluted, 0.3, 2.5, photosphere},
          {"diluted_planck+extinction", reddened(diluted), 0.3, 2.5, redden(photosphere)},
          {"two_temperature", two, 0.3, 2.5, binary},
          {"two_temperature+extinction", reddened(two), 0.3, 2.5, redden(binary)},
          {"modified_black_body", thin, 50.0, 1000.0, cold},
          {"modified_black_body_general", general, 30.0, 2000.0, thick}};
}

SpectrumInput model_spectrum(const ModelCase& c, int n) {
  SpectrumInput input;
  input.x_unit = "um";
  input.y_unit = "W/m2/Hz";
  bench::SplitMix64 random(20261202);
  for (int i = 0; i < n; ++i) {
    const double um = c.lo_um * std::pow(c.hi_um / c.lo_um, static_cast<double>(i) / (n - 1));
    const double model = c.f_nu(299792458.0 / (um * 1e-6));
    input.x.push_back(um);
    input.y.push_back(model * (1.0 + 0.01 * random.normal()));
    input.y_error.push_back(0.01 * model);
  }
  return input;
}

void register_model_benchmarks() {
  for (const ModelCase& c : model_cases()) {
    const std::string name = std::string("BM_FitModel/") + c.name + "/1000";
    benchmark::RegisterBenchmark(name.c_str(), [c](benchmark::State& state) {
      const SpectrumInput input = model_spectrum(c, 1000);
      const ModelFitOptions options;
      for (auto _ : state) {
        const MeasuredSpectrum spectrum = prepare_spectrum(input);
        const ModelFitResult fit = fit_model(model_data(spectrum), c.spec, options);
        const ModelQuantities q = derive_model_quantities(fit, spectrum.y_unit, std::nullopt, std::nullopt);
        benchmark::DoNotOptimize(q.parameters.front().value);
        if (!fit.converged) state.SkipWithError("the fit did not converge");
      }
    })->Unit(benchmark::kMicrosecond);
  }
}

int dump_spectrum(int n) {
  const SpectrumInput input = bench::synthetic_spectrum(n);
  std::printf("# fixed synthetic spectrum of BM_FitSpectrum/%d (bench/synthetic_spectrum.h)\n", n);
  std::printf("# x: nm, y: W/m2/nm, y_error: W/m2/nm\n");
  std::printf("# true temperature: %.17g K\n# true solid angle: %.17g sr\n", bench::kTrueTemperature,
              bench::kTrueSolidAngle);
  std::printf("x,y,y_error\n");
  for (std::size_t i = 0; i < input.x.size(); ++i) {
    std::printf("%.17g,%.17g,%.17g\n", input.x[i], input.y[i], input.y_error[i]);
  }
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  constexpr const char* kDump = "--dump-spectrum=";
  for (int i = 1; i < argc; ++i) {
    if (std::strncmp(argv[i], kDump, std::strlen(kDump)) == 0) {
      const int n = std::atoi(argv[i] + std::strlen(kDump));
      if (n < 3) {
        std::fprintf(stderr, "planckton-bench: --dump-spectrum needs N >= 3\n");
        return 2;
      }
      return dump_spectrum(n);
    }
  }
  // A long-running process (the service) keeps freed memory for the next request instead of
  // returning it to the kernel and faulting it in again; measure the fit the way it runs there.
  // glibc mallopt(3).
  mallopt(M_TRIM_THRESHOLD, 256 << 20);
  mallopt(M_MMAP_THRESHOLD, 64 << 20);
  register_model_benchmarks();
  benchmark::Initialize(&argc, argv);
  if (benchmark::ReportUnrecognizedArguments(argc, argv)) return 2;
  benchmark::RunSpecifiedBenchmarks();
  benchmark::Shutdown();
  return 0;
}

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
#include <string>

#include <cmath>

#include "science/derived_quantities.h"
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
  benchmark::Initialize(&argc, argv);
  if (benchmark::ReportUnrecognizedArguments(argc, argv)) return 2;
  benchmark::RunSpecifiedBenchmarks();
  benchmark::Shutdown();
  return 0;
}

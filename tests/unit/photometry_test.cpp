// Passbands, synthetic photometry and the fit of band measurements.
//
// Outside sources: Oke & Gunn 1983 (ApJ 266, 713) for the AB zero point; Bessell & Murphy 2012
// (PASP 124, 140) and Tokunaga & Vacca 2005 (PASP 117, 421) for the definitions; Sawicki 2012 (PASP
// 124, 1208) for the censored likelihood of upper limits. The comparison with python3-synphot is in
// tests/reference/test_synthetic_photometry_synphot.py.
#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <string>
#include <vector>

#include "science/constants.h"
#include "science/input_error.h"
#include "science/passband.h"
#include "science/photometry.h"
#include "science/photometry_fit.h"
#include "science/planck.h"
#include "science/synthetic_photometry.h"
#include "test_support.h"

namespace planckton {
namespace {

using testing::RelativelyNear;

const Passband& band(const std::string& id) {
  const Passband* b = find_builtin_passband(id);
  EXPECT_NE(b, nullptr) << id;
  return *b;
}

QuotedFlux band_average() { return QuotedFlux{}; }

TEST(Passbands, AllShippedCurvesLoadWithTheirMetadata) {
  const auto& bands = builtin_passbands();
  ASSERT_EQ(bands.size(), 39u);  // core/data/passbands/INDEX.csv
  EXPECT_EQ(bands.front().id, "johnson-u");
  EXPECT_EQ(bands.back().id, "spire-500");
  for (const Passband& b : bands) {
    EXPECT_FALSE(b.source.empty()) << b.id;
    EXPECT_TRUE(b.reference_wavelength_m.has_value()) << b.id;
    const double pivot = pivot_wavelength(b);
    const auto [lo, hi] = response_support(b);
    EXPECT_GT(pivot, lo) << b.id;
    EXPECT_LT(pivot, hi) << b.id;
  }
  // Detector kinds as the curve files state them.
  EXPECT_EQ(band("pacs-70").detector, DetectorKind::kEnergyIntegrating);
  EXPECT_EQ(band("spire-350").detector, DetectorKind::kEnergyIntegrating);
  EXPECT_EQ(band("2mass-ks").detector, DetectorKind::kPhotonCounting);
  // Reference wavelengths in three spellings: micron, Angstrom, nm.
  EXPECT_TRUE(RelativelyNear(*band("mips-24").reference_wavelength_m, 23.675e-6, 1e-12));
  EXPECT_TRUE(RelativelyNear(*band("johnson-v").reference_wavelength_m, 5479e-10, 1e-12));
  EXPECT_TRUE(RelativelyNear(*band("sdss-r").reference_wavelength_m, 617.6e-9, 1e-3));
  // Quoted-flux conventions of the infrared missions.
  EXPECT_EQ(band("irac-i1").quoted.kind, QuotedFlux::Kind::kMonochromatic);
  EXPECT_EQ(band("irac-i1").quoted.power_law_index, -1.0);
  EXPECT_EQ(band("wise-w3").quoted.power_law_index, -2.0);
  EXPECT_EQ(band("mips-70").quoted.reference, QuotedFlux::Reference::kBlackBody);
  EXPECT_EQ(band("2mass-j").quoted.kind, QuotedFlux::Kind::kBandAverage);
}

TEST(Passbands, TwoMassZeroPointsFollowCohenInBandFluxes) {
  // Cohen et al. 2003 (AJ 126, 1090) table 2 quotes F_nu(0 mag) = 1594, 1024 and 666.7 Jy at the
  // isophotal wavelengths (from memory); ours are the same band-averaged F_lambda taken at the pivot
  // instead, so they agree to the (lambda_p / lambda_iso)^2 difference, under 1 %.
  EXPECT_TRUE(RelativelyNear(band("2mass-j").vega_zero_point->flux_density_jy, 1594.0, 0.01));
  EXPECT_TRUE(RelativelyNear(band("2mass-h").vega_zero_point->flux_density_jy, 1024.0, 0.01));
  EXPECT_TRUE(RelativelyNear(band("2mass-ks").vega_zero_point->flux_density_jy, 666.7, 0.01));
}

TEST(Passbands, PivotOfARectangularBandIsTheGeometricMeanForPhotonsAndEnergy) {
  // For S = 1 on [a, b]: photons lambda_p^2 = (b^2 - a^2) / 2 / ln(b / a); energy lambda_p^2 = a b
  // (Tokunaga & Vacca 2005, eq. A11, integrated by hand).
  PassbandInput input{"box", {400, 400.000001, 600, 600.000001}, "nm", {0, 1, 1, 0}, DetectorKind::kEnergyIntegrating};
  const Passband energy = make_passband(input, "band");
  EXPECT_TRUE(RelativelyNear(pivot_wavelength(energy), std::sqrt(400e-9 * 600e-9), 1e-6));
  input.detector = DetectorKind::kPhotonCounting;
  const Passband photons = make_passband(input, "band");
  const double a = 400e-9, b = 600e-9;
  EXPECT_TRUE(RelativelyNear(pivot_wavelength(photons), std::sqrt((b * b - a * a) / 2.0 / std::log(b / a)), 1e-6));
  EXPECT_TRUE(RelativelyNear(effective_width(photons), 200e-9, 1e-6));
}

TEST(Passbands, InlineCurvesAreCheckedAndDecreasingOnesReversed) {
  // Given on a frequency axis (decreasing in wavelength when increasing in frequency): reversed.
  const Passband reversed = make_passband({"lab", {5e14, 6e14, 7e14}, "Hz", {0.2, 1.0, 0.3}, DetectorKind::kPhotonCounting}, "band");
  EXPECT_LT(reversed.wavelength_m.front(), reversed.wavelength_m.back());
  EXPECT_EQ(reversed.response.front(), 0.3);
  const auto rejects = [](PassbandInput input, const std::string& field, std::size_t index) {
    try {
      make_passband(input, "photometry.band");
      ADD_FAILURE() << "accepted";
    } catch (const InputError& e) {
      EXPECT_EQ(e.field(), field);
      if (e.index()) {
        EXPECT_EQ(*e.index(), index);
      }
    }
  };
  const DetectorKind p = DetectorKind::kPhotonCounting;
  rejects({"x", {400, 500, 600}, "nm", {0.1, -0.2, 0.3}, p}, "photometry.band.response", 1);
  rejects({"x", {400, 600, 500, 700}, "nm", {0.1, 0.2, 0.3, 0.4}, p}, "photometry.band.wavelength", 2);
  rejects({"x", {400, 500, 500}, "nm", {0.1, 0.2, 0.3}, p}, "photometry.band.wavelength", 2);
  rejects({"x", {400, 500}, "nm", {0.1, 0.2}, p}, "photometry.band.wavelength", 0);
  rejects({"x", {400, 500, 600}, "nm", {0.0, 0.2, 0.0}, p}, "photometry.band.response", 0);
  rejects({"x", {-400, 500, 600}, "nm", {0.1, 0.2, 0.3}, p}, "photometry.band.wavelength", 0);
  rejects({"x", {400, 500, 600}, "nm", {0.1, 0.2}, p}, "photometry.band.response", 0);
}

TEST(SyntheticPhotometry, QuadratureMatchesBruteForceIntegrationForBlackBodies) {
  // The band's Gaussian rule against the trapezoid rule on the curve refined 256 times, for every
  // shipped band and temperatures from cold dust to hot stars, wherever h c / (lambda_p k T) <= 100;
  // and every weight positive, so that no band value can come out negative deeper in the Wien tail
  // (a product rule with Lagrange weights did, for 2mass-h at 30 K: found by the synphot check).
  for (const Passband& b : builtin_passbands()) {
    const BandQuadrature q = make_band_quadrature(b, b.quoted);
    for (double w : q.weight) ASSERT_GT(w, 0.0) << b.id;
    for (double t : {15.0, 30.0, 60.0, 300.0, 3000.0, 10000.0, 30000.0}) {
      const double x = constants::kSecondRadiation / (q.pivot_wavelength_m * t);
      const auto f = [t](double nu) { return planck_per_frequency(nu, t); };
      if (x <= 100.0) {
        EXPECT_TRUE(RelativelyNear(q.apply(f), quoted_flux_by_trapezoid(b, b.quoted, f, 256), 3e-6)) << b.id << " " << t;
      } else if (x <= 600.0) {
        EXPECT_GT(q.apply(f), 0.0) << b.id << " " << t;
      }
    }
  }
}

TEST(SyntheticPhotometry, FlatSpectrumOf3631JanskyIsZeroABMagnitudeInEveryBand) {
  // Oke & Gunn 1983: m_AB = -2.5 log10(F_nu / 3631 Jy); a flat F_nu source has <F_nu> = F_nu in any
  // band-averaged photometry, photon counting or bolometric.
  for (const Passband& b : builtin_passbands()) {
    const double f_nu = make_band_quadrature(b, band_average()).apply([](double) { return kAbZeroPointJy * kJansky; });
    EXPECT_NEAR(-2.5 * std::log10(f_nu / (kAbZeroPointJy * kJansky)), 0.0, 5e-4) << b.id;
  }
}

TEST(SyntheticPhotometry, MonochromaticQuoteOfTheReferenceSpectrumIsItsValueAtTheReferenceWavelength) {
  // The definition (Reach et al. 2005, eqs. 2-3): a source with the reference shape is quoted at its
  // own F_nu(lambda_0), so its colour correction is 1.
  const Passband& irac = band("irac-i2");
  const double nu0 = constants::kSpeedOfLight / irac.quoted.reference_wavelength_m;
  const BandQuadrature q = make_band_quadrature(irac, irac.quoted);
  EXPECT_TRUE(RelativelyNear(q.apply([nu0](double nu) { return 2e-26 * nu0 / nu; }), 2e-26, 1e-9));
  const Passband& mips = band("mips-70");
  const double nu_m = constants::kSpeedOfLight / mips.quoted.reference_wavelength_m;
  const BandQuadrature qm = make_band_quadrature(mips, mips.quoted);
  EXPECT_TRUE(RelativelyNear(qm.apply([](double nu) { return planck_per_frequency(nu, 1e4); }),
                             planck_per_frequency(nu_m, 1e4), 1e-9));
}

// Simulated measurements of a black body of temperature t and solid angle omega, with noise of the
// given relative size (fixed seed).
PhotometryInput simulate(const std::vector<std::string>& ids, double t, double omega, const std::string& unit,
                         double relative_error, unsigned seed) {
  std::mt19937 random(seed);
  std::normal_distribution<double> normal;
  PhotometryInput input;
  for (const std::string& id : ids) {
    const Passband& b = band(id);
    const double f_nu = omega * make_band_quadrature(b, b.quoted).apply([t](double nu) { return planck_per_frequency(nu, t); });
    BandMeasurementInput m;
    m.band = &b;
    m.unit = unit;
    if (unit == "ABmag") {
      m.value = -2.5 * std::log10(f_nu / (kAbZeroPointJy * kJansky)) + 1.0857 * relative_error * normal(random);
      m.error = 1.0857 * relative_error;
    } else {
      m.value = f_nu / kJansky * (1.0 + relative_error * normal(random));
      m.error = f_nu / kJansky * relative_error;
    }
    input.measurements.push_back(m);
  }
  return input;
}

const std::vector<std::string> kOpticalInfrared = {"johnson-u", "johnson-b", "johnson-v", "cousins-r", "cousins-i",
                                                   "2mass-j",   "2mass-h",   "2mass-ks"};
const std::vector<std::string> kFarInfrared = {"mips-70", "pacs-100", "pacs-160", "spire-250", "spire-350", "spire-500"};

void expect_recovered(const PhotometryFitResult& fit, double t, const std::string& label) {
  ASSERT_TRUE(fit.fit.converged) << label;
  ASSERT_TRUE(fit.fit.covariance_available) << label;
  const double sigma = fit.fit.temperature_log_sigma();
  EXPECT_LT(std::abs(std::log(fit.fit.temperature_k / t)), 3.0 * sigma) << label << ": " << fit.fit.temperature_k;
  EXPECT_LT(sigma, 0.2) << label;
}

TEST(PhotometryFit, RecoversStellarTemperaturesFromMagnitudes) {
  unsigned seed = 1;
  for (double t : {3000.0, 5800.0, 10000.0, 30000.0}) {
    const MeasuredPhotometry data = prepare_photometry(simulate(kOpticalInfrared, t, 1e-17, "ABmag", 0.02, seed++));
    expect_recovered(fit_planck_photometry(data, {}), t, "T = " + std::to_string(t));
  }
}

TEST(PhotometryFit, RecoversDustTemperaturesFromFarInfraredFluxes) {
  unsigned seed = 11;
  for (double t : {15.0, 30.0, 60.0}) {
    const MeasuredPhotometry data = prepare_photometry(simulate(kFarInfrared, t, 1e-8, "Jy", 0.03, seed++));
    expect_recovered(fit_planck_photometry(data, {}), t, "T = " + std::to_string(t));
  }
}

TEST(PhotometryFit, NoiselessDataGiveTheTruthInEveryUnit) {
  for (const std::string unit : {"ABmag", "mJy", "erg/s/cm2/Angstrom"}) {
    PhotometryInput input = simulate(kOpticalInfrared, 7200.0, 3e-18, unit == "ABmag" ? "ABmag" : "Jy", 0.0, 1);
    for (auto& m : input.measurements) {
      m.error = unit == "ABmag" ? 0.02 : *m.error + 0.02 * m.value;
      if (unit == "mJy") {
        m.value *= 1e3;
        *m.error *= 1e3;
      } else if (unit == "erg/s/cm2/Angstrom") {
        // F_lambda = c / lambda_p^2 <F_nu> (Bessell & Murphy 2012 eq. A2x); 1 Jy = 1e-23 erg/s/cm2/Hz.
        const double pivot = pivot_wavelength(*m.band);
        const double factor = 1e-23 * constants::kSpeedOfLight / (pivot * pivot) * 1e-10;  // per Angstrom
        m.value *= factor;
        *m.error *= factor;
      }
      m.unit = unit;
    }
    const PhotometryFitResult fit = fit_planck_photometry(prepare_photometry(input), {});
    EXPECT_TRUE(RelativelyNear(fit.fit.temperature_k, 7200.0, 1e-6)) << unit;
    EXPECT_TRUE(RelativelyNear(fit.fit.scale, 3e-18, 1e-6)) << unit;
    EXPECT_NEAR(*fit.fit.chi_square, 0.0, 1e-8) << unit;
  }
}

TEST(PhotometryFit, MagnitudeFitAgreesWithLinearisedFluxFitForSmallErrors) {
  // The documented choice (photometry.h): magnitudes are fitted as magnitudes. For 0.5 % errors the
  // linearised flux error sigma_F = F sigma_m ln 10 / 2.5 is nearly exact, so both must agree.
  const PhotometryInput mags = simulate(kOpticalInfrared, 4500.0, 1e-17, "ABmag", 0.005, 7);
  PhotometryInput fluxes = mags;
  for (auto& m : fluxes.measurements) {
    const double f = kAbZeroPointJy * std::pow(10.0, -0.4 * m.value);
    m.error = f * *m.error / 1.0857362047581294;
    m.value = f;
    m.unit = "Jy";
  }
  const auto a = fit_planck_photometry(prepare_photometry(mags), {});
  const auto b = fit_planck_photometry(prepare_photometry(fluxes), {});
  EXPECT_TRUE(RelativelyNear(a.fit.temperature_k, b.fit.temperature_k, 2e-3));
  EXPECT_TRUE(RelativelyNear(a.fit.temperature_log_sigma(), b.fit.temperature_log_sigma(), 0.02));
}

TEST(PhotometryFit, UpperLimitBelowTheUnconstrainedModelPullsTheFitUnderIt) {
  // Without the limit the curve through the optical bands would exceed the far-red limit; Sawicki
  // 2012's censored term pulls the model to (or below) the limit instead of ignoring it.
  PhotometryInput input = simulate({"johnson-b", "johnson-v", "cousins-r"}, 6000.0, 1e-17, "Jy", 0.02, 3);
  const PhotometryFitResult free_fit = fit_planck_photometry(prepare_photometry(input), {});
  const Passband& ks = band("2mass-ks");
  const double predicted = free_fit.fit.scale *
                           make_band_quadrature(ks, ks.quoted).apply([&](double nu) { return planck_per_frequency(nu, free_fit.fit.temperature_k); }) / kJansky;
  BandMeasurementInput limit;
  limit.band = &ks;
  limit.unit = "Jy";
  limit.upper_limit = true;
  limit.error = predicted * 0.05;
  limit.value = 3.0 * *limit.error;  // a 3-sigma limit at 15 % of the prediction
  input.measurements.push_back(limit);
  const PhotometryFitResult limited = fit_planck_photometry(prepare_photometry(input), {});
  ASSERT_TRUE(limited.fit.converged);
  const BandFit& k = limited.bands.back();
  EXPECT_LT(k.model, limit.value + 2.0 * *limit.error) << "model " << k.model << " limit " << limit.value;
  EXPECT_GT(limited.fit.temperature_k, free_fit.fit.temperature_k);  // hotter: less red flux

  // The same limit far above the model changes nothing.
  input.measurements.back().error = predicted * 1e3;
  input.measurements.back().value = predicted * 1e4;  // 10 sigma above the model
  const PhotometryFitResult loose = fit_planck_photometry(prepare_photometry(input), {});
  EXPECT_TRUE(RelativelyNear(loose.fit.temperature_k, free_fit.fit.temperature_k, 1e-6));
  EXPECT_NEAR(loose.bands.back().residual, 0.0, 1e-6);
}

TEST(PhotometryFit, EffectiveWavelengthShortcutIsWrongForBroadBandsOnTheWienSide) {
  // A 3,000 K body through Gaia G (0.33-1.05 um) and WISE W3: the band integral and the curve at the
  // pivot differ by far more than photometric errors; the fit uses the integral.
  const PhotometryInput input = simulate({"gaia-g", "gaia-bp", "gaia-rp", "wise-w1", "wise-w3"}, 3000.0, 1e-17, "Jy", 0.0, 1);
  PhotometryInput with_errors = input;
  for (auto& m : with_errors.measurements) m.error = 0.01 * m.value;
  const PhotometryFitResult fit = fit_planck_photometry(prepare_photometry(with_errors), {});
  EXPECT_TRUE(RelativelyNear(fit.fit.temperature_k, 3000.0, 1e-6));
  const BandFit& g = fit.bands.front();
  EXPECT_GT(std::abs(g.model_monochromatic / g.model - 1.0), 0.02);
}

TEST(PhotometryFit, SystematicFloorWidensTheInterval) {
  PhotometryInput input = simulate(kOpticalInfrared, 5000.0, 1e-17, "ABmag", 0.005, 5);
  const double tight = fit_planck_photometry(prepare_photometry(input), {}).fit.temperature_log_sigma();
  input.systematic_fraction = 0.03;
  const double wide = fit_planck_photometry(prepare_photometry(input), {}).fit.temperature_log_sigma();
  EXPECT_GT(wide, 3.0 * tight);
}

TEST(PhotometryFit, WithoutErrorsTheScatterSetsTheIntervals) {
  PhotometryInput input = simulate(kOpticalInfrared, 5000.0, 1e-17, "Jy", 0.02, 9);
  for (auto& m : input.measurements) m.error.reset();
  const PhotometryFitResult fit = fit_planck_photometry(prepare_photometry(input), {});
  EXPECT_TRUE(fit.fit.errors_estimated);
  EXPECT_FALSE(fit.fit.chi_square.has_value());
  EXPECT_GT(fit.fit.residual_scatter_si, 0.003);
  EXPECT_LT(fit.fit.residual_scatter_si, 0.06);
  expect_recovered(fit, 5000.0, "no errors");
}

TEST(PhotometryInputs, BadMeasurementsNameTheirField) {
  const auto rejects = [](PhotometryInput input, const std::string& field) {
    try {
      prepare_photometry(input);
      ADD_FAILURE() << "accepted, expected " << field;
    } catch (const InputError& e) {
      EXPECT_EQ(e.field(), field) << e.what();
    }
  };
  const PhotometryInput good = simulate({"johnson-b", "johnson-v", "cousins-r"}, 6000.0, 1e-17, "Jy", 0.02, 3);
  PhotometryInput one = good;
  one.measurements.resize(1);
  rejects(one, "photometry");
  PhotometryInput photons = good;
  photons.measurements[1].unit = "photon/s/cm2/Angstrom";
  rejects(photons, "photometry.unit");
  PhotometryInput vega = good;
  vega.measurements[0].band = &band("sdss-g");
  vega.measurements[0].unit = "Vegamag";
  rejects(vega, "photometry.zero_point");
  PhotometryInput limit_without_error = good;
  limit_without_error.measurements[2].upper_limit = true;
  limit_without_error.measurements[2].error.reset();
  rejects(limit_without_error, "photometry.error");
  PhotometryInput mixed = good;
  mixed.measurements[1].error.reset();
  rejects(mixed, "photometry.error");
  PhotometryInput negative = good;
  negative.measurements[0].value = -1.0;
  rejects(negative, "photometry.value");
  PhotometryInput sr = good;
  sr.measurements[0].unit = "MJy/sr";
  rejects(sr, "photometry.unit");
}

TEST(PhotometryInputs, RegressionsFoundByTheServiceTests) {
  // Magnitudes are per source: beside intensities they were taken as per steradian (a 586 K answer).
  PhotometryInput mixed = simulate({"johnson-b", "johnson-v", "cousins-r"}, 6000.0, 1e-17, "ABmag", 0.02, 3);
  mixed.measurements[1].unit = "MJy/sr";
  mixed.measurements[2].unit = "MJy/sr";
  try {
    prepare_photometry(mixed);
    ADD_FAILURE() << "accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "photometry.unit");
    EXPECT_EQ(e.index(), 1u);
  }
  // A limit first and detections without errors: the problem names the first detection, not index 0.
  PhotometryInput limit_first = simulate({"johnson-b", "johnson-v", "cousins-r"}, 6000.0, 1e-17, "Jy", 0.02, 3);
  limit_first.measurements[0].upper_limit = true;
  limit_first.measurements[1].error.reset();
  limit_first.measurements[2].error.reset();
  try {
    prepare_photometry(limit_first);
    ADD_FAILURE() << "accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "photometry.error");
    EXPECT_EQ(e.index(), 1u);
  }
}

}  // namespace
}  // namespace planckton

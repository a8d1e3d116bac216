#include "science/spectrum.h"

#include <algorithm>
#include <cmath>
#include <numeric>

#include "science/constants.h"

#include "science/input_error.h"

namespace planckton {

namespace {

void require_finite(const std::vector<double>& values, const char* field) {
  for (std::size_t i = 0; i < values.size(); ++i) {
    if (!std::isfinite(values[i])) throw InputError(field, "must be a finite number", i);
  }
}

void require_positive(const std::vector<double>& values, const char* field, const char* why) {
  for (std::size_t i = 0; i < values.size(); ++i) {
    if (!(values[i] > 0.0)) throw InputError(field, std::string("must be positive (") + why + ")", i);
  }
}

void validate_exclude(const std::vector<std::array<double, 2>>& ranges) {
  for (std::size_t i = 0; i < ranges.size(); ++i) {
    const auto& [lo, hi] = ranges[i];
    if (!std::isfinite(lo) || !std::isfinite(hi) || !(lo < hi)) {
      throw InputError("exclude", "each range must be [lo, hi] with finite lo < hi, in x_unit", i);
    }
  }
}

bool is_excluded(double x, const std::vector<std::array<double, 2>>& ranges) {
  return std::any_of(ranges.begin(), ranges.end(),
                     [x](const std::array<double, 2>& r) { return x >= r[0] && x <= r[1]; });
}

}  // namespace

MeasuredSpectrum prepare_spectrum(const SpectrumInput& input) {
  MeasuredSpectrum spectrum;
  spectrum.x_unit = parse_spectral_axis_unit(input.x_unit);
  spectrum.y_unit = parse_flux_density_unit(input.y_unit);

  const std::size_t n = input.x.size();
  if (input.y.size() != n) {
    throw InputError("y", "must have as many values as x (" + std::to_string(n) + "), has " +
                              std::to_string(input.y.size()));
  }
  const bool has_errors = !input.y_error.empty();
  if (has_errors && input.y_error.size() != n) {
    throw InputError("y_error", "must have as many values as x (" + std::to_string(n) + "), has " +
                                    std::to_string(input.y_error.size()));
  }
  require_finite(input.x, "x");
  require_positive(input.x, "x", "a spectral coordinate");
  require_finite(input.y, "y");
  if (has_errors) {
    require_finite(input.y_error, "y_error");
    require_positive(input.y_error, "y_error", "a one-sigma uncertainty");
  }
  validate_exclude(input.exclude);

  spectrum.points_given = n;
  spectrum.frequency_hz.reserve(n);
  spectrum.value_si.reserve(n);
  if (has_errors) spectrum.error_si.reserve(n);
  for (std::size_t i = 0; i < n; ++i) {
    if (is_excluded(input.x[i], input.exclude)) {
      ++spectrum.points_excluded;
      continue;
    }
    const double nu = to_frequency(spectrum.x_unit, input.x[i]);
    const double value = input.y[i] * spectrum.y_unit.to_si;
    if (!std::isfinite(nu) || nu <= 0.0) throw InputError("x", "is outside the representable range", i);
    if (!std::isfinite(value)) throw InputError("y", "is outside the representable range", i);
    spectrum.frequency_hz.push_back(nu);
    spectrum.value_si.push_back(value);
    if (has_errors) {
      const double error = input.y_error[i] * spectrum.y_unit.to_si;
      if (!(error > 0.0) || !std::isfinite(error)) {
        throw InputError("y_error", "is outside the representable range", i);
      }
      spectrum.error_si.push_back(error);
    }
  }
  if (!spectrum.frequency_hz.empty()) {
    const auto [lo, hi] = std::minmax_element(spectrum.frequency_hz.begin(), spectrum.frequency_hz.end());
    spectrum.min_frequency_hz = *lo;
    spectrum.max_frequency_hz = *hi;
  }
  if (std::none_of(spectrum.value_si.begin(), spectrum.value_si.end(), [](double v) { return v > 0.0; })) {
    throw InputError("y", "has no positive value among the points kept; a black body is positive "
                          "everywhere, so the curve cannot be fitted");
  }
  return spectrum;
}

WavelengthSpectrum energy_per_wavelength(const MeasuredSpectrum& s) {
  const Convention c = s.y_unit.convention;
  if (c != Convention::kEnergyPerWavelength && c != Convention::kEnergyPerFrequency) {
    throw InputError("y_unit", "must be an energy density per unit wavelength or frequency (e.g. relative/nm, "
                               "W/m2/sr/nm, W/m2/nm); photon counts and other conventions are not accepted here");
  }
  std::vector<std::size_t> order(s.size());
  std::iota(order.begin(), order.end(), 0);
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return s.frequency_hz[a] > s.frequency_hz[b]; });
  WavelengthSpectrum out;
  for (std::size_t i : order) {
    const double nu = s.frequency_hz[i];
    const double factor = c == Convention::kEnergyPerFrequency ? nu * nu / constants::kSpeedOfLight : 1.0;
    out.source_index.push_back(i);
    out.wavelength_m.push_back(constants::kSpeedOfLight / nu);
    out.power.push_back(s.value_si[i] * factor);
  }
  return out;
}

std::optional<double> interpolate_power(const WavelengthSpectrum& s, double wavelength_m) {
  const auto& w = s.wavelength_m;
  if (w.empty() || wavelength_m < w.front() || wavelength_m > w.back()) return std::nullopt;
  const std::size_t j = static_cast<std::size_t>(std::lower_bound(w.begin(), w.end(), wavelength_m) - w.begin());
  if (j == 0) return s.power[0];
  const double t = (wavelength_m - w[j - 1]) / (w[j] - w[j - 1]);
  return s.power[j - 1] + t * (s.power[j] - s.power[j - 1]);
}

}  // namespace planckton

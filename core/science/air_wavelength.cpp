#include "science/air_wavelength.h"

#include <cmath>
#include <cstdio>
#include <string>

#include "science/input_error.h"

namespace planckton {

namespace {

std::string range_message(const char* what, double wavelength_m) {
  char text[200];
  std::snprintf(text, sizeof text,
                "%s %.6g nm is outside the range of the air-to-vacuum conversion (Morton 2000, ApJS 130, 403, "
                "eq. 8): air wavelengths from %.0f nm to %.0f um",
                what, wavelength_m * 1e9, kAirWavelengthMinM * 1e9, kAirWavelengthMaxM * 1e6);
  return text;
}

void require_air_range(double air_wavelength_m, const char* what, double shown_m) {
  if (!std::isfinite(air_wavelength_m) || air_wavelength_m < kAirWavelengthMinM ||
      air_wavelength_m > kAirWavelengthMaxM) {
    throw InputError("x", range_message(what, shown_m));
  }
}

// Wavenumber squared in um^-2 of a wavelength in metres: s = 10^4 / lambda[Angstrom] = 1e-6 / lambda[m].
double wavenumber_squared_per_um2(double wavelength_m) {
  const double s = 1e-6 / wavelength_m;
  return s * s;
}

}  // namespace

// N. Piskunov's inverse of Morton 2000 eq. 8, as given by VALD (see the header).
double air_to_vacuum_wavelength(double air_wavelength_m) {
  require_air_range(air_wavelength_m, "the air wavelength", air_wavelength_m);
  const double s2 = wavenumber_squared_per_um2(air_wavelength_m);
  const double n = 1.0 + 8.336624212083e-5 + 2.408926869968e-2 / (130.1065924522 - s2) +
                   1.599740894897e-4 / (38.92568793293 - s2);
  return air_wavelength_m * n;
}

// Morton 2000 (ApJS 130, 403), eq. 8: the refractive index of standard air at the vacuum wavenumber.
double vacuum_to_air_wavelength(double vacuum_wavelength_m) {
  // Vacuum wavelengths are longer than air ones, so one below the range's start has an air one below it
  // too (and the formula is not evaluated near its poles).
  if (!std::isfinite(vacuum_wavelength_m) || vacuum_wavelength_m < kAirWavelengthMinM) {
    throw InputError("x", range_message("the vacuum wavelength", vacuum_wavelength_m));
  }
  const double s2 = wavenumber_squared_per_um2(vacuum_wavelength_m);
  const double n = 1.0 + 8.34254e-5 + 2.406147e-2 / (130.0 - s2) + 1.5998e-4 / (38.9 - s2);
  const double air = vacuum_wavelength_m / n;
  require_air_range(air, "the vacuum wavelength", vacuum_wavelength_m);
  return air;
}

}  // namespace planckton

// Physical constants used by planckton, in SI units.
//
// The defining constants are the exact values of the 2019 redefinition of the SI, as tabulated in
// CODATA 2018 (E. Tiesinga et al., Rev. Mod. Phys. 93, 025010 (2021)). The derived constants are
// computed from them here, so that there is exactly one source of truth; the Wien displacement
// constants come from the peak equations solved in peaks.h and are checked in the tests against
// the CODATA 2018 tabulated values b = 2.897771955e-3 m K and b' = 5.878925757e10 Hz/K.
#pragma once

#include <numbers>

namespace planckton::constants {

inline constexpr const char* kSource = "CODATA 2018";

// Exact by definition of the SI (CODATA 2018).
inline constexpr double kPlanck = 6.62607015e-34;         // h, J s
inline constexpr double kSpeedOfLight = 299792458.0;      // c, m / s
inline constexpr double kBoltzmann = 1.380649e-23;        // k, J / K
inline constexpr double kElementaryCharge = 1.602176634e-19;  // e, C (so 1 eV = e J)

// Derived. Stefan-Boltzmann constant sigma = 2 pi^5 k^4 / (15 h^3 c^2) (Planck's law integrated over
// frequency and the hemisphere); CODATA 2018 quotes 5.670374419e-8 W m^-2 K^-4.
inline constexpr double kStefanBoltzmann =
    2.0 * std::numbers::pi * std::numbers::pi * std::numbers::pi * std::numbers::pi * std::numbers::pi *
    kBoltzmann * kBoltzmann * kBoltzmann * kBoltzmann /
    (15.0 * kPlanck * kPlanck * kPlanck * kSpeedOfLight * kSpeedOfLight);

// Second radiation constant c2 = h c / k, m K; CODATA 2018 quotes 1.438776877e-2 m K.
inline constexpr double kSecondRadiation = kPlanck * kSpeedOfLight / kBoltzmann;

// h / k, s K: converts a frequency to the dimensionless x = h nu / (k T) when divided by T.
inline constexpr double kPlanckOverBoltzmann = kPlanck / kBoltzmann;

// Length units used by distances, m. The astronomical unit is exact (IAU 2012 Resolution B2); the
// parsec is defined from it (IAU 2015 Resolution B2: 1 pc = 648000/pi au); the Julian light year is
// c times 365.25 days (IAU).
inline constexpr double kAstronomicalUnit = 149597870700.0;
inline constexpr double kParsec = kAstronomicalUnit * 648000.0 / std::numbers::pi;
inline constexpr double kLightYear = kSpeedOfLight * 365.25 * 86400.0;

}  // namespace planckton::constants

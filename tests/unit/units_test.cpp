// Units of the spectral axis, of flux density and of distance (science/units.h).
#include <gtest/gtest.h>

#include <cmath>
#include <functional>
#include <map>
#include <stdexcept>
#include <string>
#include <vector>

#include "science/constants.h"
#include "science/input_error.h"
#include "science/units.h"
#include "test_support.h"

namespace {

using planckton::Convention;
using planckton::SpectralAxisKind;
namespace k = planckton::constants;

using planckton::testing::RelativelyNear;

// ---------------------------------------------------------------------------------------------
// Every documented unit parses.

TEST(Units, EveryDocumentedAxisUnitParses) {
  ASSERT_FALSE(planckton::documented_spectral_axis_units().empty());
  for (const std::string& text : planckton::documented_spectral_axis_units()) {
    EXPECT_NO_THROW({
      const auto unit = planckton::parse_spectral_axis_unit(text);
      EXPECT_EQ(unit.text, text);
      EXPECT_GT(unit.to_si, 0.0);
    }) << text;
  }
}

TEST(Units, EveryDocumentedFluxUnitParses) {
  ASSERT_FALSE(planckton::documented_flux_density_units().empty());
  for (const std::string& text : planckton::documented_flux_density_units()) {
    EXPECT_NO_THROW({
      const auto unit = planckton::parse_flux_density_unit(text);
      EXPECT_EQ(unit.text, text);
      EXPECT_GT(unit.to_si, 0.0);
    }) << text;
  }
}

TEST(Units, EveryDocumentedLengthUnitParses) {
  for (const std::string& text : planckton::documented_length_units()) {
    EXPECT_GT(planckton::parse_length_unit(text), 0.0) << text;
  }
}

// ---------------------------------------------------------------------------------------------
// Axis units: kind, factor, round trip.

struct AxisExpectation {
  SpectralAxisKind kind;
  double to_si;  // m, Hz, m^-1 or J per unit
};

// from memory: SI prefixes; 1 Angstrom = 1e-10 m; 1 eV = e J (CODATA 2018, e exact)
const std::map<std::string, AxisExpectation>& axis_expectations() {
  static const std::map<std::string, AxisExpectation> kTable = {
      {"Angstrom", {SpectralAxisKind::kWavelength, 1e-10}},
      {"nm", {SpectralAxisKind::kWavelength, 1e-9}},
      {"um", {SpectralAxisKind::kWavelength, 1e-6}},
      {"mm", {SpectralAxisKind::kWavelength, 1e-3}},
      {"m", {SpectralAxisKind::kWavelength, 1.0}},
      {"Hz", {SpectralAxisKind::kFrequency, 1.0}},
      {"kHz", {SpectralAxisKind::kFrequency, 1e3}},
      {"MHz", {SpectralAxisKind::kFrequency, 1e6}},
      {"GHz", {SpectralAxisKind::kFrequency, 1e9}},
      {"THz", {SpectralAxisKind::kFrequency, 1e12}},
      {"cm-1", {SpectralAxisKind::kWavenumber, 100.0}},
      {"eV", {SpectralAxisKind::kPhotonEnergy, 1.602176634e-19}},
      {"keV", {SpectralAxisKind::kPhotonEnergy, 1.602176634e-16}},
  };
  return kTable;
}

TEST(Units, DocumentedAxisUnitsAreClassified) {
  for (const std::string& text : planckton::documented_spectral_axis_units()) {
    const auto it = axis_expectations().find(text);
    ASSERT_NE(it, axis_expectations().end()) << "no expectation for documented unit " << text;
    const auto unit = planckton::parse_spectral_axis_unit(text);
    EXPECT_EQ(unit.kind, it->second.kind) << text;
    EXPECT_TRUE(RelativelyNear(unit.to_si, it->second.to_si, 1e-15)) << text;
    EXPECT_EQ(planckton::axis_is_wavelength_like(unit), it->second.kind == SpectralAxisKind::kWavelength) << text;
  }
}

TEST(Units, AxisRoundTripThroughFrequency) {
  for (const std::string& text : planckton::documented_spectral_axis_units()) {
    const auto unit = planckton::parse_spectral_axis_unit(text);
    for (double value : {1e-3, 0.5, 1.0, 7.25, 500.0, 1e6}) {
      const double nu = planckton::to_frequency(unit, value);
      ASSERT_TRUE(std::isfinite(nu)) << text;
      ASSERT_GT(nu, 0.0) << text;
      EXPECT_TRUE(RelativelyNear(planckton::from_frequency(unit, nu), value, 1e-14)) << text << " " << value;  // common practice
    }
  }
}

TEST(Units, KnownAxisConversions) {
  using planckton::parse_spectral_axis_unit;
  using planckton::to_frequency;
  // nu = c / lambda with c exact (CODATA 2018)
  EXPECT_TRUE(RelativelyNear(to_frequency(parse_spectral_axis_unit("nm"), 500.0), 5.99584916e14, 1e-14));
  EXPECT_TRUE(RelativelyNear(to_frequency(parse_spectral_axis_unit("Angstrom"), 5000.0), 5.99584916e14, 1e-14));
  EXPECT_TRUE(RelativelyNear(to_frequency(parse_spectral_axis_unit("um"), 0.5), 5.99584916e14, 1e-14));
  // nu = c sigma: 1 cm^-1 = 29.9792458 GHz (CODATA 2018, c exact)
  EXPECT_TRUE(RelativelyNear(to_frequency(parse_spectral_axis_unit("cm-1"), 1.0), 29.9792458e9, 1e-14));
  // nu = E / h: 1 eV <-> 2.417989242e14 Hz (CODATA 2018, "electron volt-hertz relationship")
  EXPECT_TRUE(RelativelyNear(to_frequency(parse_spectral_axis_unit("eV"), 1.0), 2.417989242e14, 1e-9));
  EXPECT_TRUE(RelativelyNear(to_frequency(parse_spectral_axis_unit("keV"), 1.0), 2.417989242e17, 1e-9));
  // SI prefixes
  EXPECT_TRUE(RelativelyNear(to_frequency(parse_spectral_axis_unit("GHz"), 100.0), 1e11, 1e-15));
}

TEST(Units, AlternativeAxisSpellings) {
  const auto nu_of = [](const char* text, double value) {
    return planckton::to_frequency(planckton::parse_spectral_axis_unit(text), value);
  };
  const double one_per_cm = nu_of("cm-1", 1.0);
  EXPECT_TRUE(RelativelyNear(nu_of("cm**-1", 1.0), one_per_cm, 1e-15));  // IVOA VOUnit 1.0
  EXPECT_TRUE(RelativelyNear(nu_of("1/cm", 1.0), one_per_cm, 1e-15));    // units.h: bare "1" numerator
  EXPECT_TRUE(RelativelyNear(nu_of("cm^-1", 1.0), one_per_cm, 1e-15));   // units.h: m^-2 style
  const double one_um = nu_of("um", 1.0);
  EXPECT_TRUE(RelativelyNear(nu_of("micron", 1.0), one_um, 1e-15));      // units.h symbol table
  EXPECT_TRUE(RelativelyNear(nu_of("\xC2\xB5m", 1.0), one_um, 1e-15));   // U+00B5 MICRO SIGN, "µm"
  EXPECT_TRUE(RelativelyNear(nu_of("\xCE\xBCm", 1.0), one_um, 1e-15));   // U+03BC GREEK SMALL LETTER MU
  const double one_aa = nu_of("Angstrom", 1.0);
  EXPECT_TRUE(RelativelyNear(nu_of("AA", 1.0), one_aa, 1e-15));          // IVOA VOUnit 1.0 angstrom symbol
  EXPECT_TRUE(RelativelyNear(nu_of("\xE2\x84\xAB", 1.0), one_aa, 1e-15));  // U+212B ANGSTROM SIGN
}

TEST(Units, ToFrequencyRejectsNonPositiveAndNonFinite) {
  const auto nm = planckton::parse_spectral_axis_unit("nm");
  // units.h: values must be positive and finite
  for (double bad : {0.0, -1.0, -0.0, std::nan(""), HUGE_VAL, -HUGE_VAL}) {
    EXPECT_THROW(planckton::to_frequency(nm, bad), std::domain_error) << bad;
    EXPECT_THROW(planckton::from_frequency(nm, bad), std::domain_error) << bad;
  }
}

// ---------------------------------------------------------------------------------------------
// Flux density units: convention, flags, factor.

struct FluxExpectation {
  Convention convention;
  bool per_steradian;
  bool relative;
  double to_si;
};

// from memory: 1 erg = 1e-7 J, 1 Jy = 1e-26 W m^-2 Hz^-1 (IAU), SI prefixes
const std::map<std::string, FluxExpectation>& flux_expectations() {
  using C = Convention;
  static const std::map<std::string, FluxExpectation> kTable = {
      {"erg/s/cm2/Angstrom", {C::kEnergyPerWavelength, false, false, 1e7}},
      {"erg/s/cm2/nm", {C::kEnergyPerWavelength, false, false, 1e6}},
      {"W/m2/nm", {C::kEnergyPerWavelength, false, false, 1e9}},
      {"W/m2/um", {C::kEnergyPerWavelength, false, false, 1e6}},
      {"W/m2/Hz", {C::kEnergyPerFrequency, false, false, 1.0}},
      {"erg/s/cm2/Hz", {C::kEnergyPerFrequency, false, false, 1e-3}},
      {"Jy", {C::kEnergyPerFrequency, false, false, 1e-26}},
      {"mJy", {C::kEnergyPerFrequency, false, false, 1e-29}},
      {"uJy", {C::kEnergyPerFrequency, false, false, 1e-32}},
      {"photon/s/cm2/Angstrom", {C::kPhotonsPerWavelength, false, false, 1e14}},
      {"W/m2/sr/nm", {C::kEnergyPerWavelength, true, false, 1e9}},
      {"W/m2/sr/um", {C::kEnergyPerWavelength, true, false, 1e6}},
      {"W/m2/sr/Hz", {C::kEnergyPerFrequency, true, false, 1.0}},
      {"MJy/sr", {C::kEnergyPerFrequency, true, false, 1e-20}},
      {"Jy/sr", {C::kEnergyPerFrequency, true, false, 1e-26}},
      {"relative/nm", {C::kEnergyPerWavelength, false, true, 1e9}},
      {"relative/Hz", {C::kEnergyPerFrequency, false, true, 1.0}},
  };
  return kTable;
}

TEST(Units, DocumentedFluxUnitsAreClassified) {
  for (const std::string& text : planckton::documented_flux_density_units()) {
    const auto it = flux_expectations().find(text);
    ASSERT_NE(it, flux_expectations().end()) << "no expectation for documented unit " << text;
    const auto unit = planckton::parse_flux_density_unit(text);
    const FluxExpectation& e = it->second;
    EXPECT_EQ(unit.convention, e.convention) << text;
    EXPECT_EQ(unit.per_steradian, e.per_steradian) << text;
    EXPECT_EQ(unit.relative, e.relative) << text;
    EXPECT_TRUE(RelativelyNear(unit.to_si, e.to_si, 1e-14)) << text;
  }
}

TEST(Units, OtherConventionsAreRecognised) {
  using C = Convention;
  // from the dimensions listed in planck.h
  EXPECT_EQ(planckton::parse_flux_density_unit("W/m2/cm-1").convention, C::kEnergyPerWavenumber);
  EXPECT_EQ(planckton::parse_flux_density_unit("W/m2/eV").convention, C::kEnergyPerPhotonEnergy);
  EXPECT_EQ(planckton::parse_flux_density_unit("photon/s/m2/Hz").convention, C::kPhotonsPerFrequency);
  EXPECT_EQ(planckton::parse_flux_density_unit("photon/s/cm2/cm-1").convention, C::kPhotonsPerWavenumber);
  EXPECT_EQ(planckton::parse_flux_density_unit("photon/s/cm2/keV").convention, C::kPhotonsPerPhotonEnergy);
  EXPECT_EQ(planckton::parse_flux_density_unit("ph/s/cm2/Angstrom").convention, C::kPhotonsPerWavelength);
}

TEST(Units, KnownFluxConversions) {
  // IAU: 1 Jy = 1e-26 W m^-2 Hz^-1
  EXPECT_TRUE(RelativelyNear(planckton::parse_flux_density_unit("Jy").to_si, 1e-26, 1e-15));
  // from memory: 1 erg/s/cm2/Angstrom = 1e-7 J / 1e-4 m2 / 1e-10 m = 1e7 W m^-2 m^-1
  EXPECT_TRUE(RelativelyNear(planckton::parse_flux_density_unit("erg/s/cm2/Angstrom").to_si, 1e7, 1e-15));
  // from memory: 1 MJy/sr = 1e6 * 1e-26 W m^-2 sr^-1 Hz^-1
  const auto mjy_sr = planckton::parse_flux_density_unit("MJy/sr");
  EXPECT_TRUE(RelativelyNear(mjy_sr.to_si, 1e-20, 1e-15));
  EXPECT_TRUE(mjy_sr.per_steradian);
}

// IVOA VOUnit 1.0 spellings and other common forms give the same unit as the slash style.
TEST(Units, VoUnitSpellingsEqualSlashSpellings) {
  const std::vector<std::pair<std::string, std::string>> pairs = {
      {"erg.s**-1.cm**-2.Angstrom**-1", "erg/s/cm2/Angstrom"},  // IVOA VOUnit 1.0
      {"W.m**-2.nm**-1", "W/m2/nm"},                            // IVOA VOUnit 1.0
      {"W.m**-2.sr**-1.um**-1", "W/m2/sr/um"},                  // IVOA VOUnit 1.0
      {"photon.s**-1.cm**-2.Angstrom**-1", "photon/s/cm2/Angstrom"},  // IVOA VOUnit 1.0
      {"W m-2 nm-1", "W/m2/nm"},                                // units.h: space multiplies
      {"W/m^2/nm", "W/m2/nm"},                                  // units.h: m^2 style
      {"W m^-2 nm^-1", "W/m2/nm"},                              // units.h: m^-2 style
      {"W.m**(-2).nm**(-1)", "W/m2/nm"},                        // units.h: parenthesised power
      {"erg/s/cm2/AA", "erg/s/cm2/Angstrom"},                   // IVOA VOUnit 1.0 angstrom symbol
      {"W/m2/micron", "W/m2/um"},                               // units.h symbol table
      {"W/m2/\xC2\xB5m", "W/m2/um"},                            // "µm", U+00B5
  };
  for (const auto& [alternative, slash] : pairs) {
    SCOPED_TRACE(alternative);
    const auto a = planckton::parse_flux_density_unit(alternative);
    const auto b = planckton::parse_flux_density_unit(slash);
    EXPECT_EQ(a.convention, b.convention);
    EXPECT_EQ(a.per_steradian, b.per_steradian);
    EXPECT_EQ(a.relative, b.relative);
    EXPECT_TRUE(RelativelyNear(a.to_si, b.to_si, 1e-14));
  }
}

// ---------------------------------------------------------------------------------------------
// Rejections: an InputError naming the field, and a message that names the unit and lists what
// is accepted (units.h: "Both throw InputError ... naming the unit and listing what is accepted").

// Checks that parsing throws InputError with the field and a message quoting the unit; returns
// the message (empty on failure).
std::string expect_rejected(const std::function<void()>& call, const std::string& field, const std::string& unit) {
  try {
    call();
  } catch (const planckton::InputError& e) {
    EXPECT_EQ(e.field(), field) << unit;
    const std::string message = e.what();
    EXPECT_NE(message.find("'" + unit + "'"), std::string::npos) << "message does not name the unit: " << message;
    EXPECT_FALSE(e.index().has_value()) << unit;
    return message;
  } catch (const std::exception& e) {
    ADD_FAILURE() << unit << ": threw something other than InputError: " << e.what();
    return "";
  }
  ADD_FAILURE() << unit << ": did not throw";
  return "";
}

std::string reject_axis(const std::string& text) {
  return expect_rejected([&] { planckton::parse_spectral_axis_unit(text); }, "x_unit", text);
}
std::string reject_flux(const std::string& text) {
  return expect_rejected([&] { planckton::parse_flux_density_unit(text); }, "y_unit", text);
}
std::string reject_length(const std::string& text) {
  return expect_rejected([&] { planckton::parse_length_unit(text); }, "distance.unit", text);
}

bool lists_accepted(const std::string& message, const std::vector<std::string>& accepted) {
  for (const std::string& unit : accepted) {
    if (message.find(unit) == std::string::npos) return false;
  }
  return true;
}

// Dimension errors: the unit is well formed but measures the wrong thing.
TEST(Units, WrongDimensionIsRejectedWithTheAcceptedList) {
  const auto& axis = planckton::documented_spectral_axis_units();
  const auto& flux = planckton::documented_flux_density_units();
  EXPECT_TRUE(lists_accepted(reject_axis("W/m2"), axis));           // a flux is no spectral coordinate
  EXPECT_TRUE(lists_accepted(reject_axis("relative/nm"), axis));    // nor is a relative spectrum
  EXPECT_TRUE(lists_accepted(reject_axis("s"), axis));              // a time
  EXPECT_TRUE(lists_accepted(reject_flux("nm"), flux));             // a length is no flux density
  EXPECT_TRUE(lists_accepted(reject_flux("W/m2"), flux));           // bolometric, not spectral
  EXPECT_TRUE(lists_accepted(reject_flux("W/m2/Hz/sr2"), flux));    // sr^-2
  EXPECT_TRUE(lists_accepted(reject_flux("W/m2/Hz/sr**2"), flux));  // sr^-2, VOUnit style
  EXPECT_TRUE(lists_accepted(reject_flux("Jy.sr"), flux));          // sr^+1
  EXPECT_TRUE(lists_accepted(reject_flux("photon/relative"), flux));  // photons of an arbitrary energy flux
  EXPECT_TRUE(lists_accepted(reject_flux("photon2/s/cm2/nm"), flux));  // photon^2
  EXPECT_TRUE(lists_accepted(reject_length("Hz"), planckton::documented_length_units()));
  EXPECT_TRUE(lists_accepted(reject_length("relative"), planckton::documented_length_units()));
}

// Syntax errors: the field and the unit are named in every case.
TEST(Units, MalformedUnitsAreRejectedWithTheirField) {
  for (const char* text : {"", "   ", "furlong", "W/", "m**0", "m**12", "m**(", "m**(2", "W//m2", "nm-", "m**-",
                           "nm)", "W/m2/nm extra_", "/nm", "1/"}) {
    reject_axis(text);
    reject_flux(text);
    reject_length(text);
  }
}

// The unknown-symbol, empty and syntax messages list the accepted units as well (units.h).
TEST(Units, MalformedUnitMessagesListTheAcceptedUnits) {
  const auto& axis = planckton::documented_spectral_axis_units();
  const auto& flux = planckton::documented_flux_density_units();
  for (const char* text : {"", "furlong", "W/", "m**0", "m**12", "m**("}) {
    EXPECT_TRUE(lists_accepted(reject_axis(text), axis)) << text;
    EXPECT_TRUE(lists_accepted(reject_flux(text), flux)) << text;
  }
}

TEST(Units, SpecificSyntaxMessages) {
  // The messages say what is wrong (units.cpp's wording is not part of the contract, so only the
  // gist is checked).
  EXPECT_NE(reject_flux("").find("empty"), std::string::npos);
  EXPECT_NE(reject_flux("furlong").find("furlong"), std::string::npos);
  EXPECT_NE(reject_flux("W/").find("operator"), std::string::npos);
  EXPECT_NE(reject_axis("m**0").find("power"), std::string::npos);
  EXPECT_NE(reject_axis("m**12").find("power"), std::string::npos);
  EXPECT_NE(reject_axis("m**(2").find("parenthesis"), std::string::npos);
}

TEST(Units, PowersUpToNineAreAccepted) {
  // units.cpp accepts |power| 1..9; m**9 is a valid (if useless) unit of length^9, so as a
  // distance it is rejected for its dimension, not its syntax.
  const std::string message = reject_length("m**9");
  EXPECT_NE(message.find("is not a length"), std::string::npos) << message;
}

// A power too large for an int must be rejected like any other unsupported power, not read as 1.
TEST(Units, OverflowingPowerIsRejected) {
  // A regression test: std::from_chars reports result_out_of_range and leaves the power untouched.
  reject_axis("m99999999999");
  reject_axis("m**99999999999");
  reject_flux("W/m2/nm99999999999");
}

// ---------------------------------------------------------------------------------------------
// Lengths for distances.

TEST(Units, LengthUnits) {
  EXPECT_TRUE(RelativelyNear(planckton::parse_length_unit("pc"), 3.0856775814913673e16, 1e-15));  // IAU 2015 B2
  EXPECT_EQ(planckton::parse_length_unit("au"), 149597870700.0);                  // IAU 2012 B2, exact
  EXPECT_TRUE(RelativelyNear(planckton::parse_length_unit("ly"), 9.4607304725808e15, 1e-15));  // IAU Julian year x c
  EXPECT_TRUE(RelativelyNear(planckton::parse_length_unit("Mpc"), 3.0856775814913673e22, 1e-15));  // IAU 2015 B2
  EXPECT_TRUE(RelativelyNear(planckton::parse_length_unit("kpc"), 3.0856775814913673e19, 1e-15));  // IAU 2015 B2
  EXPECT_EQ(planckton::parse_length_unit("km"), 1e3);                              // SI prefix
  EXPECT_EQ(planckton::parse_length_unit("m"), 1.0);
}

}  // namespace

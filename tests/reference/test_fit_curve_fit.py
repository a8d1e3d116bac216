#!/usr/bin/python3
"""Planck fits of `planckton fit` against scipy.optimize.curve_fit.

Usage: test_fit_curve_fit.py --cli PATH

Synthetic noisy spectra (seeded numpy Generator, Planck law with CODATA 2018
constants from astropy.constants, unit conversions exact):
  (a) F_lambda in W/m2/nm, 400-2000 nm, T = 5800 K, Omega = 6.8e-17 sr,
      1 % Gaussian noise, y_error given;
  (a-csv) the same numbers posted as a CSV table with --x-unit/--y-unit;
  (b) F_nu in Jy, 1-30 THz, cold source T = 150 K, 2 % noise, y_error given
      (request carries temperature_bounds [10, 10000], far from the optimum);
  (c) the numbers of (a) without y_error;
  (d) Wien side: x in keV, 5-20 keV (x = h nu / kT from 5.8 to 23, every
      peak below the data range), y in photon/s/cm2/Angstrom, T = 1e7 K,
      2 % noise, y_error given.

Reference: scipy.optimize.curve_fit (scipy 1.10) on the same doubles, model
y = scale * B(T) in the spectrum's own units, analytic Jacobian, fully
converged (ftol = xtol = gtol = 1e-14, maxfev = 100000; a second fit from a
different start must agree to 1e-8, about 20 times the
roundoff floor of the chi-square minimum); sigma = y_error with
absolute_sigma=True, or no sigma with absolute_sigma=False for (c).  The
scale is fitted as a / a0 (a fixed linear rescaling, exactly equivalent,
covariance rescaled exactly).

Checks (tolerances from the brief): temperature 1e-6 relative; temperature
error 1e-3 relative; scale 1e-5 relative; scale error 1e-3 relative;
chi-square 1e-6 relative (when y_error is given; without it, the
unit-weight reduced chi-square SSR/(N-2) by which curve_fit scales pcov,
1e-6 relative); degrees of freedom
N - 2 (curve_fit's convention); p-value against scipy.stats.chi2.sf at the
CLI's own chi-square and dof, 1e-6 relative; peaks against Wien's
displacement law at the CLI's own temperature (astropy.constants.b_wien for
the B_lambda maximum, x = 3 (1 - e^-x) solved with scipy.optimize.brentq for
the B_nu maximum), 1e-8 relative.
"""

import argparse
import math
import os
import sys

import numpy as np
from scipy import optimize, stats

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import common  # noqa: E402
from common import B_WIEN, C, E_CHARGE, H, K_B  # noqa: E402

TOL_T = 1e-6
TOL_T_ERR = 1e-3
TOL_SCALE = 1e-5
TOL_SCALE_ERR = 1e-3
TOL_CHI2 = 1e-6
TOL_PVALUE = 1e-6
TOL_PEAK = 1e-8
TOL_REFERENCE_RESTART = 1e-8

SEED = 20240611


# ---- models in the spectrum's own units (per unit scale) -------------------
# Each returns (g, x) with y = scale * g and x = h nu / kT, so that
# dy/dT = scale * g * (x/T) / (1 - e^-x) and dy/dscale = g.

def model_flambda_nm_w_m2_nm(x_nm, t):
    lam = x_nm * 1e-9                                      # nm -> m
    g = common.planck_b_lambda_si(lam, t) * 1e-9           # per m -> per nm
    return g, H * C / (lam * K_B * t)


def model_fnu_thz_jy(x_thz, t):
    nu = x_thz * 1e12                                      # THz -> Hz
    g = common.planck_b_nu_si(nu, t) * 1e26                # W/m2/Hz -> Jy
    return g, H * nu / (K_B * t)


def model_photon_kev_cm2_angstrom(x_kev, t):
    energy = x_kev * 1e3 * E_CHARGE                        # keV -> J
    lam = H * C / energy                                   # at lambda = hc/E
    photons = common.planck_b_lambda_si(lam, t) / (H * C / lam)
    g = photons * 1e-4 * 1e-10                             # per m2 -> cm2, per m -> Angstrom
    return g, energy / (K_B * t)


# ---- synthetic spectra -------------------------------------------------------

def make_cases():
    rng = np.random.default_rng(SEED)
    cases = []

    x_a = np.linspace(400.0, 2000.0, 300)
    g, _ = model_flambda_nm_w_m2_nm(x_a, 5800.0)
    y_true = 6.8e-17 * g
    err_a = 0.01 * y_true
    y_a = y_true + err_a * rng.standard_normal(x_a.size)
    base_a = dict(x=x_a, y=y_a, x_unit="nm", y_unit="W/m2/nm",
                  model=model_flambda_nm_w_m2_nm, t_true=5800.0,
                  scale_true=6.8e-17, guess="wien_lambda")
    cases.append(dict(base_a, name="(a) F_lambda W/m2/nm, y_error",
                      y_error=err_a))
    cases.append(dict(base_a, name="(a-csv) same as (a) as CSV table",
                      y_error=err_a, csv=True))

    x_b = np.linspace(1.0, 30.0, 250)
    g, _ = model_fnu_thz_jy(x_b, 150.0)
    y_true = 1.0e-12 * g
    err_b = 0.02 * y_true
    y_b = y_true + err_b * rng.standard_normal(x_b.size)
    cases.append(dict(name="(b) F_nu Jy 1-30 THz, cold source, y_error",
                      x=x_b, y=y_b, y_error=err_b, x_unit="THz", y_unit="Jy",
                      model=model_fnu_thz_jy, t_true=150.0, scale_true=1.0e-12,
                      guess="wien_nu", bounds=[10.0, 10000.0]))

    cases.append(dict(base_a, name="(c) same numbers as (a), no y_error",
                      y_error=None))

    x_d = np.linspace(5.0, 20.0, 200)
    g, _ = model_photon_kev_cm2_angstrom(x_d, 1.0e7)
    y_true = 2.5e-27 * g
    err_d = 0.02 * y_true
    y_d = y_true + err_d * rng.standard_normal(x_d.size)
    cases.append(dict(name="(d) Wien side, photon/s/cm2/Angstrom vs keV, y_error",
                      x=x_d, y=y_d, y_error=err_d, x_unit="keV",
                      y_unit="photon/s/cm2/Angstrom",
                      model=model_photon_kev_cm2_angstrom, t_true=1.0e7,
                      scale_true=2.5e-27, guess="wien_slope"))
    return cases


# ---- reference fit: scipy.optimize.curve_fit ---------------------------------

def initial_temperature(case):
    x, y = case["x"], case["y"]
    if case["guess"] == "wien_lambda":      # peak of F_lambda, x in nm
        return B_WIEN / (x[np.argmax(y)] * 1e-9)
    if case["guess"] == "wien_nu":          # peak of F_nu, x in THz
        return H * x[np.argmax(y)] * 1e12 / (2.8214393721220787 * K_B)
    # Wien side, photons per wavelength ~ E^4 exp(-E/kT): slope of ln(y/E^4)
    energy = x * 1e3 * E_CHARGE
    slope = np.polyfit(energy, np.log(y / energy**4), 1)[0]
    return -1.0 / (K_B * slope)


def reference_fit(case, t0, a0):
    """curve_fit with parameters (T, a), scale = a * a0."""
    model = case["model"]

    def f(x, t, a):
        return a * a0 * model(x, t)[0]

    def jac(x, t, a):
        g, xd = model(x, t)
        g = g * a0
        return np.column_stack([a * g * common.planck_dlog_dt(xd, t), g])

    sigma = case["y_error"]
    popt, pcov = optimize.curve_fit(
        f, case["x"], case["y"], p0=[t0, 1.0] if np.isscalar(t0) else t0,
        sigma=sigma, absolute_sigma=sigma is not None, jac=jac,
        ftol=1e-14, xtol=1e-14, gtol=1e-14, maxfev=100000)
    resid = case["y"] - f(case["x"], *popt)
    chi2 = float(np.sum((resid / sigma) ** 2)) if sigma is not None \
        else float(np.sum(resid**2))
    return dict(t=popt[0], t_err=math.sqrt(pcov[0, 0]),
                scale=popt[1] * a0, scale_err=math.sqrt(pcov[1, 1]) * a0,
                chi2=chi2, dof=case["x"].size - 2, popt=popt)


def run_reference(report, case):
    t0 = initial_temperature(case)
    g, _ = case["model"](case["x"], t0)
    w = 1.0 / case["y_error"] ** 2 if case["y_error"] is not None else 1.0
    a0 = float(np.sum(w * case["y"] * g) / np.sum(w * g * g))  # linear LS scale at t0
    ref = reference_fit(case, t0, a0)
    # Convergence self-check: restart from a different point (truth * 1.1).
    alt = reference_fit(case, [1.1 * case["t_true"],
                               case["scale_true"] / a0 * 0.8], a0)
    diff = max(common.rel_err(alt["t"], ref["t"]),
               common.rel_err(alt["scale"], ref["scale"]))
    report.check("%s: reference converged (scipy.optimize.curve_fit from two "
                 "starts agrees)" % case["name"], diff, TOL_REFERENCE_RESTART,
                 diff <= TOL_REFERENCE_RESTART)
    report.info("curve_fit: p0 T=%.6g K; T = %.12g +- %.6g K; scale = %.12g "
                "+- %.6g; chi2 = %.10g (dof %d); truth T = %g, scale = %g"
                % (t0, ref["t"], ref["t_err"], ref["scale"], ref["scale_err"],
                   ref["chi2"], ref["dof"], case["t_true"], case["scale_true"]))
    return ref


# ---- the CLI -----------------------------------------------------------------

def run_cli(cli, case):
    if case.get("csv"):
        text = common.csv_table(case["x"], case["y"], case["y_error"],
                                comment="x in %s, y in %s" % (case["x_unit"],
                                                              case["y_unit"]))
        return common.run_fit(cli, csv_text=text, x_unit=case["x_unit"],
                              y_unit=case["y_unit"])
    spectrum = {"x": common.as_list(case["x"]), "x_unit": case["x_unit"],
                "y": common.as_list(case["y"]), "y_unit": case["y_unit"]}
    if case["y_error"] is not None:
        spectrum["y_error"] = common.as_list(case["y_error"])
    request = {"spectrum": spectrum, "model": {"kind": "planck"}, "options": {}}
    if "bounds" in case:
        request["options"]["temperature_bounds"] = case["bounds"]
    return common.run_fit(cli, request=request)


def wien_frequency_x():
    """Root of x = 3 (1 - e^-x): the B_nu maximum (Wien's law, frequency form)."""
    return optimize.brentq(lambda x: x - 3.0 * (-math.expm1(-x)), 1.0, 3.0,
                           xtol=1e-15, rtol=4 * np.finfo(float).eps)


def compare(report, case, ref, run):
    name = case["name"]
    ok = report.check("%s: planckton fit exit status 0 and JSON response "
                      "(interface B)" % name, run.returncode, 0,
                      run.returncode == 0 and run.response is not None)
    if not ok:
        report.info("stderr: " + run.stderr.strip()[:1000])
        return
    t = run.get("parameters", "temperature", "value")
    t_err = run.get("parameters", "temperature", "error")
    scale = run.get("parameters", "scale", "value")
    scale_err = run.get("parameters", "scale", "error")
    chi2 = run.get("statistics", "chi_square")
    dof = run.get("statistics", "degrees_of_freedom")
    rchi2 = run.get("statistics", "reduced_chi_square")
    p_value = run.get("statistics", "p_value")
    report.info("planckton: T = %s +- %s K (68%% %s, 95%% %s); scale = %s +- %s "
                "[%s]; chi2 = %s, dof = %s, reduced = %s, p = %s"
                % (t, t_err, run.get("parameters", "temperature", "interval_68"),
                   run.get("parameters", "temperature", "interval_95"),
                   scale, scale_err, run.get("parameters", "scale", "unit"),
                   chi2, dof, rchi2, p_value))
    for w in run.get("warnings") or []:
        report.info("planckton warning: %s" % (w,))

    src = "scipy.optimize.curve_fit"
    report.check_rel("%s: temperature vs %s" % (name, src), t, ref["t"], TOL_T)
    report.check_rel("%s: temperature error vs %s pcov (absolute_sigma=%s)"
                     % (name, src, case["y_error"] is not None),
                     t_err, ref["t_err"], TOL_T_ERR)
    report.check_rel("%s: scale vs %s" % (name, src), scale, ref["scale"],
                     TOL_SCALE)
    report.check_rel("%s: scale error vs %s pcov" % (name, src), scale_err,
                     ref["scale_err"], TOL_SCALE_ERR)
    report.check("%s: degrees of freedom = N - 2 (%s convention)" % (name, src),
                 dof, ref["dof"], dof == ref["dof"])
    if case["y_error"] is not None:
        report.check_rel("%s: chi-square vs sum(((y - f)/sigma)^2) at the %s "
                         "optimum" % (name, src), chi2, ref["chi2"], TOL_CHI2)
        try:
            p_ref = float(stats.chi2.sf(float(chi2), int(dof)))
        except (TypeError, ValueError):
            p_ref = float("nan")
        report.check_rel("%s: p-value vs scipy.stats.chi2.sf(chi2, dof)" % name,
                         p_value, p_ref, TOL_PVALUE)
    else:
        # Without y_error curve_fit scales pcov by SSR / (N - 2); the CLI's
        # unit-weight reduced chi-square must be that same factor.
        got, field = common.unit_weight_reduced_chi_square(run)
        report.check_rel("%s: unit-weight reduced chi-square (%s) vs %s "
                         "SSR/(N-2), its pcov scaling factor" % (name, field, src),
                         got, ref["chi2"] / ref["dof"], TOL_CHI2)

    if isinstance(t, (int, float)) and t > 0:
        lam_pk = run.get("peaks", "wavelength", "value")
        nu_pk = run.get("peaks", "frequency", "value")
        report.check_rel("%s: peaks.wavelength (nm) vs Wien's law b/T "
                         "(astropy.constants.b_wien) at the CLI's T" % name,
                         lam_pk, B_WIEN / t * 1e9, TOL_PEAK)
        report.check_rel("%s: peaks.frequency (Hz) vs B_nu maximum x k T / h, "
                         "x = 3(1 - e^-x) by scipy.optimize.brentq" % name,
                         nu_pk, wien_frequency_x() * K_B * t / H, TOL_PEAK)


def body(report):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cli", required=True)
    args = parser.parse_args()
    if not common.require_executable(report, "planckton CLI", args.cli):
        return
    for case in make_cases():
        ref = run_reference(report, case)
        run = run_cli(args.cli, case)
        compare(report, case, ref, run)


if __name__ == "__main__":
    common.main_guard("planckton fit vs scipy.optimize.curve_fit", body)

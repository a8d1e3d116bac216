#!/usr/bin/python3
"""CIE standard illuminant A, fitted by `planckton fit`.

Usage: test_cie_illuminant_a.py --cli PATH

Source: the CIE 015:2018 defining formula of illuminant A (from memory; it
is also in ISO/CIE 11664-2):
    S_A(lambda) = 100 (560/lambda)^5 (exp(1.435e7 / (2848 * 560)) - 1)
                  / (exp(1.435e7 / (2848 * lambda)) - 1),   lambda in nm,
tabulated here at 380-780 nm in 5 nm steps (81 values), and posted as
y_unit "relative/nm" without y_error.

The formula is exactly Planckian in shape: with c2' = 1.435e-2 m K it is
B_lambda at the temperature whose c2 / T equals c2' / 2848 K, i.e.
T_exact = 2848 K * c2 / c2' with c2 = hc/k = 1.438776877...e-2 m K (CODATA
2018, from astropy.constants), T_exact = 2855.4959... K.  CIE 015 describes
illuminant A as a Planckian radiator of about 2856 K (from memory).

Checks: temperature within 1 K of 2856 K (CIE 015); within 0.05 K of
T_exact (CIE 015 formula + CODATA 2018 c2); reduced chi-square <= 1e-8
(statistics.reduced_chi_square, or statistics.residual_scatter squared when
the CLI leaves the former null for data without y_error)
(S_A ranges 10-250, so this is an RMS residual <= 1e-4, about 1e-6 of the
values: the shape must be Planckian to near rounding); temperature error
<= 0.05 K (without y_error the covariance is scaled by the reduced
chi-square, as with curve_fit's absolute_sigma=False, so it must be tiny).
"""

import argparse
import os
import sys

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import common  # noqa: E402
from common import C2  # noqa: E402

CIE_C2_PRIME_NM_K = 1.435e7       # c2 in the CIE 015 formula, nm K (from memory)
CIE_T_NOMINAL = 2848.0            # K in the CIE 015 formula (from memory)
CIE_A_NOMINAL_TEMPERATURE = 2856.0  # CIE 015: "about 2856 K" (from memory)
T_EXACT = CIE_T_NOMINAL * C2 / (CIE_C2_PRIME_NM_K * 1e-9)

TOL_NOMINAL_K = 1.0
TOL_EXACT_K = 0.05
MAX_REDUCED_CHI2 = 1e-8
MAX_T_ERROR_K = 0.05


def illuminant_a(lam_nm):
    """CIE 015:2018 illuminant A relative spectral power distribution."""
    return (100.0 * (560.0 / lam_nm) ** 5
            * np.expm1(CIE_C2_PRIME_NM_K / (CIE_T_NOMINAL * 560.0))
            / np.expm1(CIE_C2_PRIME_NM_K / (CIE_T_NOMINAL * lam_nm)))


def body(report):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cli", required=True)
    args = parser.parse_args()
    if not common.require_executable(report, "planckton CLI", args.cli):
        return

    lam = np.arange(380.0, 781.0, 5.0)
    s_a = illuminant_a(lam)
    report.info("S_A: %d values, %.4f at 380 nm, %.4f at 560 nm, %.4f at 780 nm;"
                " T_exact = 2848 K * %.12g / 1.435e-2 = %.6f K"
                % (lam.size, s_a[0], s_a[lam == 560.0][0], s_a[-1], C2, T_EXACT))
    request = {"spectrum": {"x": common.as_list(lam), "x_unit": "nm",
                            "y": common.as_list(s_a), "y_unit": "relative/nm"},
               "model": {"kind": "planck"}, "options": {}}
    run = common.run_fit(args.cli, request=request)
    ok = report.check("planckton fit exit status 0 and JSON response "
                      "(interface B)", run.returncode, 0,
                      run.returncode == 0 and run.response is not None)
    if not ok:
        report.info("stderr: " + run.stderr.strip()[:1000])
        return
    t = run.get("parameters", "temperature", "value")
    t_err = run.get("parameters", "temperature", "error")
    report.info("planckton: T = %s +- %s K, scale = %s [%s], chi2 = %s, "
                "dof = %s, reduced chi2 = %s, residual scatter = %s"
                % (t, t_err, run.get("parameters", "scale", "value"),
                   run.get("parameters", "scale", "unit"),
                   run.get("statistics", "chi_square"),
                   run.get("statistics", "degrees_of_freedom"),
                   run.get("statistics", "reduced_chi_square"),
                   run.get("statistics", "residual_scatter")))
    for w in run.get("warnings") or []:
        report.info("planckton warning: %s" % (w,))

    report.check_abs("temperature vs CIE 015:2018 illuminant A nominal 2856 K "
                     "(K)", t, CIE_A_NOMINAL_TEMPERATURE, TOL_NOMINAL_K)
    report.check_abs("temperature vs CIE 015:2018 illuminant A formula "
                     "2848 K rescaled to CODATA 2018 c2 = hc/k (K)",
                     t, T_EXACT, TOL_EXACT_K)
    rchi2, field = common.unit_weight_reduced_chi_square(run)
    report.check_max("reduced chi-square, %s (CIE 015:2018 illuminant A "
                     "formula is exactly Planckian in shape)" % field,
                     rchi2, MAX_REDUCED_CHI2)
    report.check_max("temperature error in K (CIE 015 formula exactly "
                     "Planckian; covariance scaled by reduced chi-square as "
                     "curve_fit absolute_sigma=False)", t_err, MAX_T_ERROR_K)


if __name__ == "__main__":
    common.main_guard("CIE 015:2018 illuminant A formula vs planckton fit", body)

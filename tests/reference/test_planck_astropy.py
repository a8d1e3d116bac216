#!/usr/bin/python3
"""Planck-law values of planckton-planck-values against astropy.

Usage: test_planck_astropy.py --values-tool PATH

Grid: 30 temperatures log-spaced from 3 K to 1e6 K; for each, frequencies
with x = h nu / kT log-spaced from 1e-8 to 700 (40 values) plus a denser
Wien tail 380..700, and x = 701 ... 740 (beyond the point where exp(x)
overflows).  Every (T, nu) pair is sent to the tool
as %.17g text, so both sides use the same doubles.

Sources:
* astropy.modeling.models.BlackBody (astropy 5.2, expm1-based, CODATA 2018
  constants from astropy.constants) for B_nu.  It returns
  erg cm-2 s-1 Hz-1 sr-1, converted by astropy.units to W m-2 Hz-1 sr-1.
  astropy is used only where it is accurate: its denominator
  c^2 * expm1(x) overflows for x > ~670.4 (it then returns 0), so it is used
  only where its SI value is >= 1e-290 (a correctly rounded result of
  normal doubles).
* Elsewhere (x > ~670, including every x > 700): Planck's law evaluated in
  log space, log B = log(2 h nu^3 / c^2) - x - log1p(-exp(-x)) (computed as
  log(-expm1(-x)), identical but exact for small x too), with the same
  CODATA 2018 constants, each convention in its own log so that it is exact
  even where B_nu itself is subnormal.  This log-space formula is itself
  checked against astropy where both are defined.
* The other conventions are B_nu converted exactly: B_lambda = B_nu nu^2/c,
  B_sigma = c B_nu, B_E = B_nu / h, photon radiances = B / (h nu).
* dB_nu/dT: central finite difference of astropy BlackBody (relative step
  1e-4 / max(1, x); truncation ~ (1e-4)^2 / 6, rounding < 1e-11), and the
  log-space analytic derivative B (x/T) / (1 - e^-x) where astropy is not
  accurate.

Tolerances (chosen here): 1e-10 relative for the seven quantities against
the astropy / log-space references (astropy's own error is ~x * 1e-16
<= 1e-13); 1e-6 relative for dB/dT against the finite difference.  Relative
checks are made where the reference is a normal double (>= DBL_MIN ~ 2.2e-308);
all outputs must be finite and >= 0 everywhere and > 0 where the reference
is a normal double.
"""

import argparse
import math
import os
import subprocess
import sys
import warnings

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import common  # noqa: E402
from common import C, DBL_MIN, H, K_B  # noqa: E402

import astropy.units as u  # noqa: E402
from astropy.modeling.models import BlackBody  # noqa: E402

TOL_VALUES = 1e-10       # relative, chosen here (see docstring)
TOL_DERIVATIVE_FD = 1e-6  # relative, vs astropy central difference
ASTROPY_ACCURATE_MIN = 1e-290  # SI B_nu below this: astropy not trusted
SELF_CHECK_TOL = 1e-12   # log-space formula vs astropy (reference self-check)

QUANTITIES = [
    ("B_nu", "W m-2 sr-1 Hz-1"),
    ("B_lambda", "W m-2 sr-1 m-1"),
    ("B_sigma", "W m-2 sr-1 m"),
    ("B_E", "W m-2 sr-1 J-1"),
    ("photon N_nu", "s-1 m-2 sr-1 Hz-1"),
    ("photon N_lambda", "s-1 m-2 sr-1 m-1"),
    ("dB_nu/dT", "W m-2 sr-1 Hz-1 K-1"),
]


def build_grid():
    temps = np.geomspace(3.0, 1.0e6, 30)
    # log-spaced over the whole range, plus a denser Wien tail where
    # astropy's expm1 denominator overflows (x ~ 670).
    x_main = np.unique(np.concatenate([
        np.geomspace(1.0e-8, 700.0, 40), np.linspace(380.0, 700.0, 17),
        [665.0, 669.0, 671.0, 675.0, 690.0]]))
    x_beyond = np.array([701.0, 703.0, 705.0, 708.0, 710.0, 712.0, 715.0,
                         720.0, 725.0, 730.0, 740.0])
    xs = np.concatenate([x_main, x_beyond])
    t_col = np.repeat(temps, xs.size)
    x_col = np.tile(xs, temps.size)
    nu_col = x_col * K_B * t_col / H
    # Round-trip through the text the tool reads, so both sides agree.
    t_col = np.array([float("%.17g" % t) for t in t_col])
    nu_col = np.array([float("%.17g" % n) for n in nu_col])
    return t_col, nu_col


def astropy_b_nu_si(nu, temps):
    """astropy BlackBody B_nu in W m-2 Hz-1 sr-1 (element-wise T)."""
    model = BlackBody(temperature=1.0 * u.K)
    with warnings.catch_warnings(), np.errstate(over="ignore", under="ignore"):
        warnings.simplefilter("ignore")
        out = model.evaluate(nu * u.Hz, temps * u.K, 1.0)
    return out.to_value(u.W / (u.m**2 * u.Hz * u.sr))


def log_space_refs(t, nu):
    """Log-space Planck law, each convention in its own log (SI units).

    log1p(-exp(-x)) is written as log(-expm1(-x)): the same function, but
    also exact for x << 1, where 1 - exp(-x) would cancel."""
    x = H * nu / (K_B * t)
    log_b_nu = (math.log(2.0 * H) + 3.0 * np.log(nu) - 2.0 * math.log(C)
                - x - np.log(-np.expm1(-x)))
    log_b_lam = log_b_nu + 2.0 * np.log(nu) - math.log(C)
    logs = [
        log_b_nu,
        log_b_lam,
        log_b_nu + math.log(C),
        log_b_nu - math.log(H),
        log_b_nu - math.log(H) - np.log(nu),
        log_b_lam - math.log(H) - np.log(nu),
        log_b_nu + np.log(x / t) - np.log(-np.expm1(-x)),
    ]
    with np.errstate(under="ignore"):
        return [np.exp(v) for v in logs]


def run_tool(report, tool, t, nu):
    text = "".join("%.17g %.17g\n" % (a, b) for a, b in zip(t, nu))
    proc = subprocess.run([tool], input=text, capture_output=True, text=True,
                          timeout=common.SUBPROCESS_TIMEOUT_S)
    report.check("planckton-planck-values exit status (interface A)",
                 proc.returncode, 0, proc.returncode == 0)
    rows = []
    bad_lines = 0
    for line in proc.stdout.splitlines():
        if not line.strip():
            continue
        try:
            vals = [float(f) for f in line.split()]
        except ValueError:
            vals = []
        if len(vals) != 7:
            bad_lines += 1
            vals = [float("nan")] * 7
        rows.append(vals)
    ok = len(rows) == len(t) and bad_lines == 0
    report.check("one line of 7 numbers per input (interface A): lines",
                 "%d lines, %d malformed" % (len(rows), bad_lines),
                 "%d lines, 0 malformed" % len(t), ok)
    if proc.stderr.strip():
        report.info("tool stderr: " + proc.stderr.strip()[:500])
    if not ok:
        return None
    return np.array(rows, dtype=float)


def worst_points(report, mask, err, t, nu, got, ref, n=5):
    idx = np.flatnonzero(mask)
    if idx.size == 0:
        return
    order = idx[np.argsort(np.nan_to_num(err[idx], nan=np.inf))[::-1][:n]]
    for i in order:
        x = H * nu[i] / (K_B * t[i])
        report.info("worst: T=%.6g K nu=%.6g Hz x=%.6g got=%.17g ref=%.17g "
                    "rel=%.3g" % (t[i], nu[i], x, got[i], ref[i], err[i]))


def rel_check(report, name, mask, got, ref, tol, t, nu):
    with np.errstate(invalid="ignore", divide="ignore"):
        err = np.abs(got - ref) / np.abs(ref)
    err = np.where(np.isnan(err), np.inf, err)
    count = int(mask.sum())
    if count == 0:
        report.check(name + " [no points]", "0 points", ">0 points", False)
        return
    worst = float(np.max(err[mask]))
    ok = report.check("%s [%d pts]: max rel err" % (name, count), worst, tol,
                      worst <= tol)
    if not ok:
        worst_points(report, mask & (err > tol), err, t, nu, got, ref)


def body(report):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--values-tool", required=True)
    args = parser.parse_args()
    if not common.require_executable(report, "values tool", args.values_tool):
        return

    t, nu = build_grid()
    x = H * nu / (K_B * t)
    report.info("grid: %d points, T %.3g..%.3g K, x %.3g..%.3g"
                % (t.size, t.min(), t.max(), x.min(), x.max()))

    out = run_tool(report, args.values_tool, t, nu)
    if out is None:
        return

    # ---- references -------------------------------------------------------
    b_ap = astropy_b_nu_si(nu, t)                        # astropy BlackBody
    ap_ok = np.isfinite(b_ap) & (b_ap >= ASTROPY_ACCURATE_MIN)
    logref = log_space_refs(t, nu)                       # log-space Planck law

    # Reference self-check: the log-space formula must agree with astropy
    # wherever astropy is accurate (otherwise the reference is wrong).
    with np.errstate(invalid="ignore", divide="ignore"):
        self_err = np.abs(logref[0][ap_ok] - b_ap[ap_ok]) / b_ap[ap_ok]
    report.check("reference self-check: log-space Planck law vs astropy "
                 "BlackBody B_nu [%d pts]: max rel diff" % int(ap_ok.sum()),
                 float(self_err.max()), SELF_CHECK_TOL,
                 float(self_err.max()) <= SELF_CHECK_TOL)

    # astropy-based references, exact conversions of astropy's B_nu.
    ap_refs = [
        b_ap,
        b_ap * nu**2 / C,
        C * b_ap,
        b_ap / H,
        b_ap / (H * nu),
        b_ap * nu**2 / C / (H * nu),
    ]
    # dB/dT: central finite difference of astropy BlackBody.
    eps = 1e-4 / np.maximum(1.0, x)
    t_hi = t * (1.0 + eps)
    t_lo = t * (1.0 - eps)
    b_hi = astropy_b_nu_si(nu, t_hi)
    b_lo = astropy_b_nu_si(nu, t_lo)
    fd_ok = (ap_ok & np.isfinite(b_hi) & np.isfinite(b_lo)
             & (b_hi >= ASTROPY_ACCURATE_MIN) & (b_lo >= ASTROPY_ACCURATE_MIN))
    ap_refs.append((b_hi - b_lo) / (t_hi - t_lo))
    report.info("astropy accurate at %d points (x <= %.4g); log-space "
                "reference at the other %d (x up to %.4g)"
                % (int(ap_ok.sum()), float(x[ap_ok].max()),
                   int((~ap_ok).sum()), float(x.max())))

    # ---- checks, one set per quantity ------------------------------------
    for q, (label, unit) in enumerate(QUANTITIES):
        got = out[:, q]
        is_deriv = q == 6
        ap_mask = fd_ok if is_deriv else ap_ok
        ap_name = ("astropy BlackBody central difference" if is_deriv
                   else "astropy BlackBody")
        rel_check(report, "%s vs %s (x<=%.0f)" % (label, ap_name,
                                                  float(x[ap_mask].max())),
                  ap_mask, got, ap_refs[q],
                  TOL_DERIVATIVE_FD if is_deriv else TOL_VALUES, t, nu)

        ref_log = logref[q]
        log_mask = (~ap_mask) & (ref_log >= DBL_MIN)
        rel_check(report, "%s vs log-space Planck law (x>%.0f, normal-range "
                  "reference)" % (label, float(x[ap_mask].max())),
                  log_mask, got, ref_log, TOL_VALUES, t, nu)

        n_bad = int(np.sum(~np.isfinite(got) | (got < 0.0)))
        ok = report.check("%s finite and >= 0 over the whole grid (Planck law: "
                          "B >= 0) [%d pts]: bad points" % (label, got.size),
                          n_bad, 0, n_bad == 0)
        if not ok:
            worst_points(report, ~np.isfinite(got) | (got < 0.0),
                         np.full(got.size, np.inf), t, nu, got, ref_log)
        repr_mask = ref_log >= DBL_MIN
        n_zero = int(np.sum(repr_mask & ~(got > 0.0)))
        ok = report.check("%s > 0 where the log-space Planck law is a normal "
                          "double [%d pts]: non-positive points"
                          % (label, int(repr_mask.sum())),
                          n_zero, 0, n_zero == 0)
        if not ok:
            worst_points(report, repr_mask & ~(got > 0.0),
                         np.full(got.size, np.inf), t, nu, got, ref_log)


if __name__ == "__main__":
    common.main_guard("Planck values vs astropy BlackBody / log-space Planck "
                      "law (CODATA 2018)", body)

"""Shared helpers for the reference tests in tests/reference/.

The reference tests compare planckton against outside sources (astropy,
scipy, the CIE 015 formula).  This module holds what they share:

* ``Report``: prints one line per check (status, name, measured value,
  tolerance) and, as the very last line, exactly ``N passed, M failed``;
* ``main_guard``: runs a test body, turns an unexpected exception into a
  failed check (so a crash can never look like a pass) and sets the exit
  status (0 only when at least one check ran and none failed);
* ``run_fit``: writes a JSON request or CSV table to a temporary file, runs
  ``planckton fit FILE`` and parses the JSON response;
* exact SI constants (CODATA 2018, taken from astropy.constants) and
  vectorised Planck-law helpers used to build references.

Run with Debian's /usr/bin/python3 (numpy, scipy 1.10, astropy 5.2).
"""

import json
import math
import os
import subprocess
import sys
import tempfile
import traceback

import numpy as np
from astropy import constants as _const

# CODATA 2018 exact SI values, as shipped by astropy 5.2 (astropy.constants).
H = _const.h.si.value            # Planck constant [J s]
K_B = _const.k_B.si.value        # Boltzmann constant [J K-1]
C = _const.c.si.value            # speed of light [m s-1]
E_CHARGE = _const.e.si.value     # elementary charge [C] (eV -> J)
B_WIEN = _const.b_wien.si.value  # Wien wavelength displacement constant [m K]
C2 = H * C / K_B                 # second radiation constant hc/k [m K]

DBL_MIN = sys.float_info.min     # smallest positive normal double

SUBPROCESS_TIMEOUT_S = 300


def _fmt(value):
    """Format a measured value / tolerance for a report line."""
    if isinstance(value, (bool, np.bool_)):
        return "yes" if value else "no"
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    if isinstance(value, (float, np.floating)):
        return "%.6g" % float(value)
    return str(value)


class Report:
    """Collects checks and prints one line per check."""

    def __init__(self, title):
        self.title = title
        self.passed = 0
        self.failed = 0
        print("# " + title, flush=True)

    def check(self, name, measured, tolerance, ok):
        """Record one check; ``ok`` must be a plain truth value."""
        ok = bool(ok)
        if ok:
            self.passed += 1
        else:
            self.failed += 1
        print("%s  %s  measured=%s  tolerance=%s" % (
            "PASS" if ok else "FAIL", name, _fmt(measured), _fmt(tolerance)),
            flush=True)
        return ok

    def check_rel(self, name, got, ref, tol):
        """|got - ref| / |ref| <= tol (NaN or a non-finite value fails)."""
        err = rel_err(got, ref)
        return self.check(name, err, tol, math.isfinite(err) and err <= tol)

    def check_abs(self, name, got, ref, tol):
        """|got - ref| <= tol (NaN or a non-finite value fails)."""
        try:
            err = abs(float(got) - float(ref))
        except (TypeError, ValueError):
            err = float("nan")
        return self.check(name, err, tol, math.isfinite(err) and err <= tol)

    def check_max(self, name, got, limit):
        """got <= limit (NaN fails)."""
        try:
            val = float(got)
        except (TypeError, ValueError):
            val = float("nan")
        return self.check(name, val, "<= %s" % _fmt(limit),
                          math.isfinite(val) and val <= limit)

    def info(self, text):
        """A line that is not a check (indented so it cannot be mistaken)."""
        for line in str(text).splitlines():
            print("    " + line, flush=True)

    def finish(self):
        """Print the summary line (always the last line); return exit code."""
        print("%d passed, %d failed" % (self.passed, self.failed), flush=True)
        return 0 if (self.failed == 0 and self.passed > 0) else 1


def rel_err(got, ref):
    """Relative difference; NaN when either side is missing or not a number."""
    try:
        got = float(got)
        ref = float(ref)
    except (TypeError, ValueError):
        return float("nan")
    if ref == 0.0:
        return 0.0 if got == 0.0 else float("inf")
    return abs(got - ref) / abs(ref)


def main_guard(title, body):
    """Run ``body(report)``; an exception becomes a failed check."""
    report = Report(title)
    try:
        body(report)
    except Exception as exc:  # noqa: BLE001 - any crash must count as failure
        report.info(traceback.format_exc())
        report.check("script ran to completion (%s)" % type(exc).__name__,
                     "exception", "none", False)
    sys.exit(report.finish())


def require_executable(report, label, path):
    """Check that a tool given on the command line exists and is executable."""
    ok = bool(path) and os.path.isfile(path) and os.access(path, os.X_OK)
    report.check("%s is an executable file (%s)" % (label, path),
                 "yes" if ok else "no", "yes", ok)
    return ok


# --------------------------------------------------------------------------
# Running the CLI
# --------------------------------------------------------------------------

class FitRun:
    """Result of one ``planckton fit`` invocation."""

    def __init__(self, returncode, stdout, stderr, response):
        self.returncode = returncode
        self.stdout = stdout
        self.stderr = stderr
        self.response = response  # parsed JSON (dict) or None

    def get(self, *keys):
        """Nested lookup: run.get('parameters', 'temperature', 'value')."""
        node = self.response
        for key in keys:
            if isinstance(node, dict) and key in node:
                node = node[key]
            else:
                return None
        return node


def unit_weight_reduced_chi_square(run):
    """Reduced chi-square of a fit without y_error (unit weights, SSR/dof).

    Interface B lists statistics.reduced_chi_square; the CLI may instead
    leave it null without y_error and report statistics.residual_scatter
    (the one-sigma scatter sqrt(SSR/dof)).  Returns (value, field used)."""
    value = run.get("statistics", "reduced_chi_square")
    if isinstance(value, (int, float)):
        return float(value), "statistics.reduced_chi_square"
    scatter = run.get("statistics", "residual_scatter", "value")
    if scatter is None:
        scatter = run.get("statistics", "residual_scatter")
    if isinstance(scatter, (int, float)):
        return float(scatter) ** 2, "statistics.residual_scatter^2 (reduced_chi_square is null)"
    return float("nan"), "neither statistics.reduced_chi_square nor residual_scatter"


def run_fit(cli, request=None, csv_text=None, x_unit=None, y_unit=None,
            extra_args=()):
    """Run ``cli fit FILE`` on a JSON request (dict) or on a CSV table.

    Floats are written with repr(), so the CLI reads the very same doubles
    as the Python reference uses.
    """
    with tempfile.TemporaryDirectory(prefix="planckton-ref-") as tmp:
        if request is not None:
            path = os.path.join(tmp, "request.json")
            with open(path, "w", encoding="utf-8") as fh:
                json.dump(request, fh)
            args = [cli, "fit", path]
        else:
            path = os.path.join(tmp, "spectrum.csv")
            with open(path, "w", encoding="utf-8") as fh:
                fh.write(csv_text)
            args = [cli, "fit", path, "--x-unit", x_unit, "--y-unit", y_unit]
        args.extend(extra_args)
        proc = subprocess.run(args, capture_output=True, text=True,
                              timeout=SUBPROCESS_TIMEOUT_S, stdin=subprocess.DEVNULL)
    response = None
    if proc.returncode == 0:
        try:
            response = json.loads(proc.stdout)
        except json.JSONDecodeError:
            response = None
    return FitRun(proc.returncode, proc.stdout, proc.stderr, response)


def csv_table(x, y, y_error=None, comment=None):
    """A CSV table in the CLI's format (repr() keeps every double exact)."""
    lines = []
    if comment:
        lines.append("# " + comment)
    lines.append("x,y,y_error" if y_error is not None else "x,y")
    for i in range(len(x)):
        row = [repr(float(x[i])), repr(float(y[i]))]
        if y_error is not None:
            row.append(repr(float(y_error[i])))
        lines.append(",".join(row))
    return "\n".join(lines) + "\n"


def as_list(values):
    """numpy array -> list of Python floats (for JSON)."""
    return [float(v) for v in np.asarray(values, dtype=float)]


# --------------------------------------------------------------------------
# Planck law in SI (Planck's law as in any radiometry text; used with the
# CODATA 2018 constants above).  expm1 keeps the Rayleigh-Jeans side exact.
# --------------------------------------------------------------------------

def planck_b_lambda_si(lam_m, temperature):
    """Spectral radiance per unit wavelength [W m-2 sr-1 m-1]."""
    lam_m = np.asarray(lam_m, dtype=float)
    x = H * C / (lam_m * K_B * temperature)
    return 2.0 * H * C**2 / lam_m**5 / np.expm1(x)


def planck_b_nu_si(nu_hz, temperature):
    """Spectral radiance per unit frequency [W m-2 sr-1 Hz-1]."""
    nu_hz = np.asarray(nu_hz, dtype=float)
    x = H * nu_hz / (K_B * temperature)
    return 2.0 * H * nu_hz**3 / C**2 / np.expm1(x)


def planck_dlog_dt(x_dimless, temperature):
    """d ln B / dT at a fixed spectral coordinate (any convention):
    (x / T) * e^x / (e^x - 1) = (x / T) / (1 - e^-x)."""
    return (x_dimless / temperature) / (-np.expm1(-x_dimless))

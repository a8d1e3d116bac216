#!/usr/bin/python3
"""planckton's extinction laws against python3-extinction.

Usage: test_extinction_laws.py --values-tool PATH [--points N]

planckton-extinction-values prints A_lambda / A_V (core/science/extinction.h)
on a dense log grid across each law's range, for R_V = 2.5, 3.1, 4.0, 5.5
(Milky Way laws) and 4.05, 3.1 (Calzetti 2000), plus probes at and just
outside the range ends.  This script evaluates python3-extinction on the same
wavelengths (in Angstrom, A_V = 1, so the library's A_lambda in magnitudes is
A_lambda / A_V) and requires:

* Cardelli, Clayton & Mathis 1989, O'Donnell 1994 and Calzetti et al. 2000
  to 1e-6 relative, Fitzpatrick 1999 to 1e-4 relative (the issue's
  tolerances; measured: rounding, ~1e-14).  Where the law itself crosses zero
  (Calzetti 2000 with R_V = 3.1 near 1.50 um) a relative difference means
  nothing, so the difference is taken relative to max(|reference|, 1e-3).
* The ranges: the tool's range ends are the published ones listed in RANGES
  below (each with its source); the tool accepts both ends and refuses
  1e-9 relative beyond them, with an InputError message in micrometres naming
  the law; and python3-extinction refuses (raises, or returns a non-finite
  value) none of the wavelengths the tool accepts.  python3-extinction 0.4.6
  itself raises nowhere for positive wavelengths: it extrapolates silently
  (CCM89 at 1 Angstrom: ~5e13 mag).  So "where the library raises" is
  checked as: wherever it does raise, the tool refuses too; where it
  extrapolates and the tool refuses, that is listed as a note.

Sources:
* python3-extinction 0.4.6 (Debian 12; K. Barbary, extinction.pyx):
  extinction.ccm89, extinction.odonnell94, extinction.fitzpatrick99,
  extinction.calzetti00, called as f(wave_aa, 1.0, r_v, unit='aa').  Its
  docstrings give the ranges quoted in RANGES.
* The papers, for the ranges: Cardelli, Clayton & Mathis 1989 (ApJ 345, 245)
  eqs. 2-5 span 0.3 <= x <= 10 um^-1; Fitzpatrick 1999 (PASP 111, 63) as
  implemented by FM_UNRED / python3-extinction, 910 A to 6 um; Calzetti et al.
  2000 (ApJ 533, 682) eq. 4, 0.12 to 2.2 um.
"""

import argparse
import json
import math
import os
import subprocess
import sys
import warnings

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import common  # noqa: E402

import extinction  # noqa: E402  python3-extinction (Debian)

ANGSTROM_M = 1e-10

# The library function for each planckton law: python3-extinction 0.4.6 (Debian).
LIBRARY = {
    "cardelli1989": ("extinction.ccm89", extinction.ccm89),
    "odonnell1994": ("extinction.odonnell94", extinction.odonnell94),
    "fitzpatrick1999": ("extinction.fitzpatrick99", extinction.fitzpatrick99),
    "calzetti2000": ("extinction.calzetti00", extinction.calzetti00),
}

# The tolerances (relative).
TOLERANCE = {"cardelli1989": 1e-6, "odonnell1994": 1e-6, "fitzpatrick1999": 1e-4,
             "calzetti2000": 1e-6}
# Below this |A_lambda / A_V| the difference is measured against this value instead (zero crossing).
RATIO_FLOOR = 1e-3

# R_V values the tool must print, per law (the brief).
R_V = {"cardelli1989": [2.5, 3.1, 4.0, 5.5], "odonnell1994": [2.5, 3.1, 4.0, 5.5],
       "fitzpatrick1999": [2.5, 3.1, 4.0, 5.5], "calzetti2000": [4.05, 3.1]}
DEFAULT_R_V = {"cardelli1989": 3.1, "odonnell1994": 3.1, "fitzpatrick1999": 3.1,
               "calzetti2000": 4.05}

# Published ranges [m] and where they are stated.
RANGES = {
    # Cardelli, Clayton & Mathis 1989 eqs. 2a,b (x >= 0.3 um^-1) to 5a,b (x <= 10 um^-1).  The
    # library's docstring: "The claimed validity is 1250 Angstroms to 3.3 microns" (CCM89's
    # well-determined part); its code evaluates eqs. 2-5 (and beyond).
    "cardelli1989": (1e-6 / 10.0, 1e-6 / 0.3,
                     "CCM89 eqs. 2-5, 0.3 <= x <= 10 um^-1"),
    # O'Donnell 1994 replaces only CCM89's optical coefficients: CCM89's range.
    "odonnell1994": (1e-6 / 10.0, 1e-6 / 0.3,
                     "CCM89's range (O'Donnell 1994 revises eq. 3 only)"),
    # python3-extinction docstring of fitzpatrick99: "This function is defined from 910 A to
    # 6 microns, but note the claimed validity goes down only to 1150 A" (after FM_UNRED).
    "fitzpatrick1999": (910e-10, 6e-6,
                        "python3-extinction / FM_UNRED: defined from 910 A to 6 microns"),
    # Calzetti et al. 2000 eq. 4; the library's docstring: "valid between 0.12 to 2.2 microns".
    "calzetti2000": (0.12e-6, 2.2e-6, "Calzetti et al. 2000 eq. 4, 0.12 to 2.2 um"),
}
TOL_RANGE = 1e-12  # relative, for the range ends as printed (%.17g of the same doubles)

# Wavelengths at which to ask the library whether it refuses [Angstrom]: 1 A to 1 mm.
LIBRARY_PROBES_AA = np.geomspace(1.0, 1e7, 141)


def run_tool(report, tool, points):
    args = [tool] + ([str(points)] if points else [])
    proc = subprocess.run(args, capture_output=True, text=True,
                          timeout=common.SUBPROCESS_TIMEOUT_S, stdin=subprocess.DEVNULL)
    report.check("planckton-extinction-values exit status", proc.returncode, 0,
                 proc.returncode == 0)
    if proc.stderr.strip():
        report.info("tool stderr: " + proc.stderr.strip()[:500])
    try:
        data = json.loads(proc.stdout)
    except json.JSONDecodeError as exc:
        report.check("tool output is JSON (%s)" % exc, "no", "yes", False)
        return None
    report.check("tool output is JSON", "yes", "yes", True)
    return data


def library_ratio(law_id, wavelengths_aa, r_v):
    """A_lambda / A_V from python3-extinction (A_V = 1 mag)."""
    _, function = LIBRARY[law_id]
    return function(np.ascontiguousarray(wavelengths_aa, dtype=float), 1.0, r_v, unit="aa")


def library_refuses(law_id, wavelength_aa, r_v):
    """True when the library raises for this single wavelength or gives a non-finite value."""
    try:
        with warnings.catch_warnings(), np.errstate(all="ignore"):
            warnings.simplefilter("ignore")
            value = library_ratio(law_id, np.array([wavelength_aa]), r_v)[0]
    except (ValueError, ArithmeticError, extinction.DomainError):
        return True
    return not math.isfinite(value)


def difference(got, ref):
    """|got - ref| / max(|ref|, RATIO_FLOOR), elementwise (NaN -> inf)."""
    got = np.asarray(got, dtype=float)
    ref = np.asarray(ref, dtype=float)
    err = np.abs(got - ref) / np.maximum(np.abs(ref), RATIO_FLOOR)
    return np.where(np.isfinite(err), err, np.inf)


def check_listing(report, data):
    got = [(e["id"], e["r_v"]) for e in data["laws"]]
    want = [(law_id, r_v) for law_id in LIBRARY for r_v in R_V[law_id]]
    report.check("tool lists the four laws in order (cardelli1989, odonnell1994, fitzpatrick1999, "
                 "calzetti2000) with the R_V values asked for [%d entries]" % len(want),
                 "%d entries" % len(got), "%d entries" % len(want), got == want)
    bad = [e["id"] for e in data["laws"] if e.get("default_r_v") != DEFAULT_R_V.get(e["id"])]
    report.check("default R_V: 3.1 for the Milky Way laws, 4.05 for Calzetti 2000 "
                 "(Calzetti et al. 2000 eq. 5)", ", ".join(sorted(set(bad))) or "all right",
                 "all right", not bad)


def check_values(report, entry, worst):
    law_id, r_v = entry["id"], entry["r_v"]
    name, _ = LIBRARY[law_id]
    w_m = np.array(entry["wavelengths_m"], dtype=float)
    got = np.array([np.nan if v is None else v for v in entry["ratio"]], dtype=float)
    lo, hi = entry["min_wavelength_m"], entry["max_wavelength_m"]
    inside = bool(w_m.size >= 2 and np.all(np.diff(w_m) > 0) and w_m[0] == lo and w_m[-1] == hi)
    report.check("%s R_V=%g: grid increasing from the range's start to its end, both included "
                 "[%d points]" % (law_id, r_v, w_m.size), "yes" if inside else "no", "yes", inside)
    # python3-extinction 0.4.6 (Debian), extinction.<function>(wave [A], a_v=1, r_v, unit='aa')
    ref = library_ratio(law_id, w_m / ANGSTROM_M, r_v)
    err = difference(got, ref)
    i = int(np.argmax(err))
    tol = TOLERANCE[law_id]
    report.check("%s R_V=%g vs python3-extinction 0.4.6 %s: max rel diff (at %.6g um)"
                 % (law_id, r_v, name, w_m[i] * 1e6), float(err[i]), tol, err[i] <= tol)
    if err[i] > worst.get(law_id, (-1.0,))[0]:
        worst[law_id] = (float(err[i]), r_v, w_m[i])


def check_range(report, entry):
    law_id, r_v = entry["id"], entry["r_v"]
    lo, hi = entry["min_wavelength_m"], entry["max_wavelength_m"]
    want_lo, want_hi, source = RANGES[law_id]
    err = max(common.rel_err(lo, want_lo), common.rel_err(hi, want_hi))
    report.check("%s R_V=%g: range %.6g-%.6g um is the published one (%s): max rel diff"
                 % (law_id, r_v, lo * 1e6, hi * 1e6, source), err, TOL_RANGE, err <= TOL_RANGE)

    # The tool at its edges: accepts the ends, refuses beyond them with a message in micrometres.
    wrong = []
    for probe in entry["edge_probes"]:
        w = probe["wavelength_m"]
        should_accept = lo <= w <= hi
        if probe["accepted"] != should_accept:
            wrong.append("%.10g um %s" % (w * 1e6, "refused" if should_accept else "accepted"))
        elif not should_accept:
            message = probe["error"] or ""
            if " um" not in message or law_id not in message:
                wrong.append("%.10g um: message names no range in um / no law: %r" % (w * 1e6, message))
    report.check("%s R_V=%g: tool accepts the range ends and refuses 1e-9 and a factor 2 beyond "
                 "them (InputError naming the law and the range in um) [%d probes]"
                 % (law_id, r_v, len(entry["edge_probes"])), "; ".join(wrong) or "all right",
                 "all right", not wrong)

    # python3-extinction 0.4.6 (Debian): where it refuses, the tool must refuse too; it must accept
    # everything the tool accepts (the grid, including both ends, and the accepted probes).
    accepted_by_tool = list(np.array(entry["wavelengths_m"]) / ANGSTROM_M)
    accepted_by_tool += [p["wavelength_m"] / ANGSTROM_M for p in entry["edge_probes"] if p["accepted"]]
    library_refused = [w for w in accepted_by_tool if library_refuses(law_id, w, r_v)]
    report.check("%s R_V=%g: python3-extinction refuses none of the %d wavelengths the tool "
                 "accepts" % (law_id, r_v, len(accepted_by_tool)),
                 len(library_refused), 0, not library_refused)
    outside = [w for w in list(LIBRARY_PROBES_AA) +
               [p["wavelength_m"] / ANGSTROM_M for p in entry["edge_probes"] if not p["accepted"]]
               if not lo <= w * ANGSTROM_M <= hi]
    raises_inside = [w for w in LIBRARY_PROBES_AA
                     if lo <= w * ANGSTROM_M <= hi and library_refuses(law_id, w, r_v)]
    refused_outside = [w for w in outside if library_refuses(law_id, w, r_v)]
    report.check("%s R_V=%g: wherever python3-extinction refuses (of %d probes, 1 A to 1 mm), the "
                 "tool's range excludes it" % (law_id, r_v, len(LIBRARY_PROBES_AA)),
                 len(raises_inside), 0, not raises_inside)
    return len(outside) - len(refused_outside), len(outside)


def body(report):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--values-tool", required=True)
    parser.add_argument("--points", type=int, default=0,
                        help="wavelengths per law and R_V (default: the tool's, 2000)")
    args = parser.parse_args()
    if not common.require_executable(report, "values tool", args.values_tool):
        return
    report.info("python3-extinction %s from %s" % (extinction.__version__, extinction.__file__))
    data = run_tool(report, args.values_tool, args.points)
    if data is None:
        return
    check_listing(report, data)

    worst = {}
    extrapolated = {}
    for entry in data["laws"]:
        if entry["id"] not in LIBRARY:
            report.check("known law id %r" % entry["id"], "unknown", "known", False)
            continue
        check_values(report, entry, worst)
        n_extrapolated, n_outside = check_range(report, entry)
        extrapolated[entry["id"]] = (n_extrapolated, n_outside)

    report.info("worst difference per law vs python3-extinction (relative to max(|ref|, %g)):"
                % RATIO_FLOOR)
    for law_id, (err, r_v, w) in worst.items():
        report.info("  %-16s %.2e  (R_V=%g, %.6g um; tolerance %g)"
                    % (law_id, err, r_v, w * 1e6, TOLERANCE[law_id]))
    report.info("note: outside the tool's ranges python3-extinction %s returns finite values "
                "(extrapolates) at:" % extinction.__version__)
    for law_id, (n_extrapolated, n_outside) in extrapolated.items():
        report.info("  %-16s %d of %d probes" % (law_id, n_extrapolated, n_outside))


if __name__ == "__main__":
    common.main_guard("Extinction laws (CCM89, O'Donnell 94, F99, Calzetti 00) vs "
                      "python3-extinction 0.4.6", body)

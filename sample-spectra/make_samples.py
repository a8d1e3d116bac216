#!/usr/bin/python3
"""Generate the synthetic demo spectra in this directory, plus truth.json.

Everything here is invented: the "Tallow Moor Observatory" survey, its
survey stars TMS-xxxx and the "Cinder Street photometry lab" with its bench
lamp QL-3, lamp QL-7, white LED W-2 and furnace sample K-4 do not exist, and
every number is computed below from a Planck curve (or, for the LED, a sum of
Gaussians) plus seeded pseudo-random noise.

The lab samples are requests for POST /v1/light and POST /v1/hot-body (JSON
only); their truth ("lab_samples" in truth.json) is computed here, not by
planckton: colorimetry from the CIE 1931 2-degree table in core/data/ and a
brute-force nearest-point search of the Planckian locus for CCT and Duv.

Usage (from the repository root):

    /usr/bin/python3 sample-spectra/make_samples.py           # write the files
    /usr/bin/python3 sample-spectra/make_samples.py --check   # write, then fit

The default run needs numpy only and is deterministic: running it twice gives
byte-identical files (every number is written with a fixed printf format).
--check additionally needs scipy; it re-reads the written CSV and JSON files,
fits a Planck curve to each and compares the fit with truth.json.
"""

import json
import math
import os
import sys

import numpy as np

# Physical constants: CODATA 2018 exact values (SI redefinition of 2019).
H = 6.62607015e-34   # Planck constant, J s
C = 299792458.0      # speed of light in vacuum, m/s
K = 1.380649e-23     # Boltzmann constant, J/K

# Astronomical length units, used only to invent radii and distances:
R_SUN = 6.957e8                       # nominal solar radius, m (IAU 2015 Resolution B3)
AU = 149597870700.0                   # astronomical unit, m (IAU 2012 Resolution B2)
PARSEC = AU * 648000.0 / math.pi      # parsec, m (IAU 2015 Resolution B2)

# Unit conversions to SI spectral densities.
ERG_S_CM2_ANGSTROM = 1e7   # 1 erg/s/cm2/Angstrom = 1e-7 W / 1e-4 m2 / 1e-10 m = 1e7 W/m2/m
W_M2_UM = 1e6              # 1 W/m2/um = 1e6 W/m2/m
MJY = 1e-29                # 1 mJy = 1e-29 W/m2/Hz
W_M2_SR_NM = 1e9           # 1 W/m2/sr/nm = 1e9 W/m2/sr/m

BASE_SEED = 4700           # sample i uses numpy.random.default_rng(BASE_SEED + i)
HERE = os.path.dirname(os.path.abspath(__file__))


def planck_lambda(lam_m, t):
    """B_lambda(T) = 2hc^2/lambda^5 / (exp(hc/(lambda k T)) - 1), in W/m2/sr/m."""
    return 2.0 * H * C ** 2 / lam_m ** 5 / np.expm1(H * C / (lam_m * K * t))


def planck_nu(nu_hz, t):
    """B_nu(T) = 2 h nu^3/c^2 / (exp(h nu/(k T)) - 1), in W/m2/sr/Hz."""
    return 2.0 * H * nu_hz ** 3 / C ** 2 / np.expm1(H * nu_hz / (K * t))


def absorption(lam_nm, lines):
    """Product of Gaussian absorption lines, 1 - depth*exp(-0.5((lambda-l0)/w)^2)."""
    f = np.ones_like(lam_nm)
    for ln in lines:
        f *= 1.0 - ln["depth"] * np.exp(-0.5 * ((lam_nm - ln["center_nm"]) / ln["width_nm"]) ** 2)
    return f


def solid_angle(radius_m, distance_m):
    """Solid angle of a uniform disc of radius R at distance d, Omega = pi (R/d)^2."""
    return math.pi * (radius_m / distance_m) ** 2


# ---------------------------------------------------------------------------
# Output helpers: fixed-precision text so that reruns are byte-identical.

class Raw(str):
    """A pre-formatted JSON number."""


def fmt_array(values, fmt):
    return [Raw(fmt % v) for v in values]


def dump_json(obj, indent=0, per_line=8):
    pad = "  " * indent
    pad1 = "  " * (indent + 1)
    if isinstance(obj, Raw):
        return str(obj)
    if isinstance(obj, dict):
        if not obj:
            return "{}"
        items = ["%s%s: %s" % (pad1, json.dumps(k), dump_json(v, indent + 1, per_line))
                 for k, v in obj.items()]
        return "{\n" + ",\n".join(items) + "\n" + pad + "}"
    if isinstance(obj, (list, tuple)):
        if not obj:
            return "[]"
        if all(isinstance(v, (Raw, int, float)) and not isinstance(v, bool) for v in obj):
            parts = [dump_json(v) for v in obj]
            if len(parts) <= per_line:
                return "[" + ", ".join(parts) + "]"
            rows = [", ".join(parts[i:i + per_line]) for i in range(0, len(parts), per_line)]
            return "[\n" + pad1 + (",\n" + pad1).join(rows) + "\n" + pad + "]"
        return "[\n" + ",\n".join(pad1 + dump_json(v, indent + 1, per_line) for v in obj) + "\n" + pad + "]"
    if isinstance(obj, float):
        return repr(obj)
    return json.dumps(obj)


def write_batch(samples):
    """batch.ndjson: every sample's JSON request on one line, with the sample's name as its id, for
    POST /v1/fit/batch."""
    lines = []
    for s in samples:
        with open(os.path.join(HERE, s["stem"] + ".json"), encoding="ascii") as fh:
            request = json.load(fh)
        lines.append(json.dumps(dict({"id": s["stem"]}, **request), separators=(",", ":")))
    write_text("batch.ndjson", "\n".join(lines) + "\n")


def write_text(name, text):
    with open(os.path.join(HERE, name), "w", encoding="ascii", newline="\n") as fh:
        fh.write(text)


def write_sample(s):
    """Write <stem>.csv and <stem>.json for one sample dict."""
    xs = fmt_array(s["x"], s["x_fmt"])
    ys = fmt_array(s["y"], "%.6e")
    es = fmt_array(s["y_error"], "%.4e") if s["y_error"] is not None else None

    lines = ["# " + c for c in s["comments"]]
    lines.append("# x unit: %s ; y unit: %s%s" % (
        s["x_unit"], s["y_unit"], " ; y_error in the y unit" if es else " ; no y_error column"))
    lines.append("# provenance: synthetic, made by make_samples.py (seed %d); true values in truth.json"
                 % s["seed"])
    lines.append("x,y,y_error" if es else "x,y")
    for i in range(len(xs)):
        lines.append(",".join([xs[i], ys[i], es[i]] if es else [xs[i], ys[i]]))
    write_text(s["stem"] + ".csv", "\n".join(lines) + "\n")

    spectrum = {"x": xs, "x_unit": s["x_unit"], "y": ys, "y_unit": s["y_unit"]}
    if es:
        spectrum["y_error"] = es
    if s["exclude"]:
        spectrum["exclude"] = [[Raw(s["x_fmt"] % lo), Raw(s["x_fmt"] % hi)] for lo, hi in s["exclude"]]
    request = {"spectrum": spectrum, "model": {"kind": "planck"}, "options": s["options"]}
    write_text(s["stem"] + ".json", dump_json(request) + "\n")


# ---------------------------------------------------------------------------
# The samples.

def photon_like_sigma(model, snr_at_peak):
    """Noise that scales like sqrt(signal): S/N = snr_at_peak at the brightest point."""
    peak = float(np.max(model))
    return np.sqrt(model * peak) / snr_at_peak


def hot_star(seed):
    rng = np.random.default_rng(seed)
    t_true = 9500.0
    radius = 2.10 * R_SUN
    distance_pc = 120.0
    omega = solid_angle(radius, distance_pc * PARSEC)
    lam = np.arange(350.0, 1000.0 + 0.5, 1.0)                    # nm, 651 points
    lines = [  # plain Gaussian absorption lines
        {"center_nm": 397.0, "width_nm": 1.2, "depth": 0.30},
        {"center_nm": 410.2, "width_nm": 1.5, "depth": 0.35},
        {"center_nm": 434.0, "width_nm": 1.8, "depth": 0.40},
        {"center_nm": 486.1, "width_nm": 2.0, "depth": 0.45},
        {"center_nm": 656.3, "width_nm": 2.2, "depth": 0.40},
    ]
    model = omega * planck_lambda(lam * 1e-9, t_true) * absorption(lam, lines) / ERG_S_CM2_ANGSTROM
    snr = 50.0
    sigma = photon_like_sigma(model, snr)
    y = model + rng.normal(0.0, 1.0, lam.size) * sigma
    exclude = [(round(l["center_nm"] - 4 * l["width_nm"], 1), round(l["center_nm"] + 4 * l["width_nm"], 1))
               for l in lines]
    return {
        "stem": "tms-0047-hot-star", "seed": seed,
        "object": "TMS-0047, hot survey star (invented), Tallow Moor Observatory survey telescope (invented)",
        "comments": [
            "object: TMS-0047, hot survey star of the Tallow Moor Observatory small survey (all invented)",
            "content: flux density F_lambda = Omega * B_lambda(T) with five Gaussian absorption lines, S/N ~50",
        ],
        "x": lam, "x_fmt": "%.3f", "x_unit": "nm", "y": y, "y_unit": "erg/s/cm2/Angstrom", "y_error": sigma,
        "exclude": exclude,
        "options": {"distance": {"value": Raw("%.1f" % distance_pc), "unit": "pc"}},
        "truth": {
            "temperature_K": t_true,
            "scale": {"kind": "solid_angle", "value": omega, "unit": "sr"},
            "radius_m": radius, "radius_R_sun": radius / R_SUN,
            "distance": {"value": distance_pc, "unit": "pc", "in_request": True},
            "noise": {"kind": "gaussian, photon-like sigma = sqrt(model*peak)/50",
                      "snr_at_peak": snr, "y_error_given": True},
            "features": {"absorption_lines": lines,
                         "exclude_rule": "center +- 4 widths (Gaussian sigma)"},
            "grid": "350-1000 nm, step 1 nm",
        },
    }


def cool_star(seed):
    rng = np.random.default_rng(seed)
    t_true = 3900.0
    radius = 0.62 * R_SUN
    distance_pc = 14.0
    omega = solid_angle(radius, distance_pc * PARSEC)
    lam = np.arange(500.0, 2400.0 + 1.0, 2.0)                    # nm
    gaps = [(1350.0, 1450.0), (1800.0, 1950.0)]
    keep = np.ones(lam.size, dtype=bool)
    for lo, hi in gaps:
        keep &= ~((lam >= lo) & (lam <= hi))
    model_full = omega * planck_lambda(lam * 1e-9, t_true) / W_M2_UM
    snr = 40.0
    sigma_full = photon_like_sigma(model_full, snr)
    noise = rng.normal(0.0, 1.0, lam.size)   # drawn on the full grid, then the gaps are cut
    lam, model, sigma, noise = lam[keep], model_full[keep], sigma_full[keep], noise[keep]
    y = model + noise * sigma
    return {
        "stem": "tms-0112-cool-star", "seed": seed,
        "object": "TMS-0112, cool survey star (invented), Tallow Moor Observatory survey telescope (invented)",
        "comments": [
            "object: TMS-0112, cool survey star of the Tallow Moor Observatory small survey (all invented)",
            "content: flux density F_lambda = Omega * B_lambda(T), S/N ~40; telluric gaps 1350-1450 nm and "
            "1800-1950 nm have no points",
        ],
        "x": lam, "x_fmt": "%.3f", "x_unit": "nm", "y": y, "y_unit": "W/m2/um", "y_error": sigma,
        "exclude": [],
        "options": {},
        "truth": {
            "temperature_K": t_true,
            "scale": {"kind": "solid_angle", "value": omega, "unit": "sr"},
            "radius_m": radius, "radius_R_sun": radius / R_SUN,
            "distance": {"value": distance_pc, "unit": "pc", "in_request": False},
            "noise": {"kind": "gaussian, photon-like sigma = sqrt(model*peak)/40",
                      "snr_at_peak": snr, "y_error_given": True},
            "features": {"telluric_gaps_nm": [list(g) for g in gaps],
                         "note": "points inside the gaps were removed (not masked)"},
            "grid": "500-2400 nm, step 2 nm, minus the gaps",
        },
    }


def sunlike_star(seed):
    rng = np.random.default_rng(seed)
    t_true = 5750.0
    radius = 1.05 * R_SUN
    distance_pc = 85.0
    omega = solid_angle(radius, distance_pc * PARSEC)
    nu_lo, nu_hi = C / 900e-9 / 1e12, C / 380e-9 / 1e12          # THz
    nu = np.linspace(nu_lo, nu_hi, 700)                            # uniform in frequency
    lam = C / (nu * 1e12) * 1e9                                    # nm
    lines = [
        {"center_nm": 430.8, "width_nm": 0.8, "depth": 0.25},
        {"center_nm": 517.0, "width_nm": 1.0, "depth": 0.30},
        {"center_nm": 589.2, "width_nm": 0.9, "depth": 0.35},
    ]
    model = omega * planck_nu(nu * 1e12, t_true) * absorption(lam, lines) / MJY
    snr = 50.0
    sigma = float(np.max(model)) / snr                             # homoscedastic
    y = model + rng.normal(0.0, sigma, nu.size)
    # exclude ranges in THz: the wavelength range center +- 4 widths mapped to frequency
    def thz(nm):
        return C / (nm * 1e-9) / 1e12
    exclude = [(math.floor(thz(l["center_nm"] + 4 * l["width_nm"]) * 1e3) / 1e3,
                math.ceil(thz(l["center_nm"] - 4 * l["width_nm"]) * 1e3) / 1e3)
               for l in lines]
    exclude.sort()
    return {
        "stem": "tms-0203-sunlike-star", "seed": seed,
        "object": "TMS-0203, sun-like survey star (invented), Tallow Moor Observatory survey telescope (invented)",
        "comments": [
            "object: TMS-0203, sun-like survey star of the Tallow Moor Observatory small survey (all invented)",
            "content: flux density F_nu = Omega * B_nu(T) on a uniform frequency grid (380-900 nm), three "
            "Gaussian absorption lines, constant noise, no y_error column",
        ],
        "x": nu, "x_fmt": "%.6f", "x_unit": "THz", "y": y, "y_unit": "mJy", "y_error": None,
        "exclude": exclude,
        "options": {},
        "truth": {
            "temperature_K": t_true,
            "scale": {"kind": "solid_angle", "value": omega, "unit": "sr"},
            "radius_m": radius, "radius_R_sun": radius / R_SUN,
            "distance": {"value": distance_pc, "unit": "pc", "in_request": False},
            "noise": {"kind": "gaussian, constant sigma = peak/50", "sigma_mJy": sigma,
                      "snr_at_peak": snr, "y_error_given": False},
            "features": {"absorption_lines": lines,
                         "exclude_rule": "center +- 4 widths in wavelength, converted to THz and rounded outward"},
            "grid": "700 points uniform in frequency, %.3f-%.3f THz (900-380 nm)" % (nu_lo, nu_hi),
        },
    }


def bench_lamp(seed):
    rng = np.random.default_rng(seed)
    t_true = 3050.0
    emissivity = 0.40
    lam = np.arange(380.0, 1000.0 + 0.5, 1.0)                    # nm, 621 points
    model = emissivity * planck_lambda(lam * 1e-9, t_true) / W_M2_SR_NM
    rel, floor_frac = 0.01, 0.003
    sigma = np.sqrt((rel * model) ** 2 + (floor_frac * float(np.max(model))) ** 2)
    y = model + rng.normal(0.0, 1.0, lam.size) * sigma
    spikes = [  # narrow stray-light emission spikes: (pixel wavelength nm, multiplicative excess)
        {"x_nm": 436.0, "excess_fraction": 0.9},
        {"x_nm": 546.0, "excess_fraction": 0.6},
        {"x_nm": 547.0, "excess_fraction": 0.3},
        {"x_nm": 812.0, "excess_fraction": 0.35},
    ]
    for sp in spikes:
        i = int(np.argmin(np.abs(lam - sp["x_nm"])))
        y[i] += sp["excess_fraction"] * model[i]
        sp["excess_in_sigma"] = round(float(sp["excess_fraction"] * model[i] / sigma[i]), 1)
    return {
        "stem": "ql3-bench-lamp", "seed": seed,
        "object": "bench lamp QL-3, quartz-tungsten lamp of the Cinder Street photometry lab (invented)",
        "comments": [
            "object: bench lamp QL-3, quartz-tungsten lamp, Cinder Street photometry lab (invented)",
            "content: spectral radiance L_lambda = emissivity * B_lambda(T), 1% noise plus a floor, "
            "a few narrow emission spikes (outliers)",
        ],
        "x": lam, "x_fmt": "%.3f", "x_unit": "nm", "y": y, "y_unit": "W/m2/sr/nm", "y_error": sigma,
        "exclude": [],
        "options": {"loss": {"kind": "cauchy", "scale": Raw("2.0")}},
        "truth": {
            "temperature_K": t_true,
            "scale": {"kind": "emissivity", "value": emissivity, "unit": "1"},
            "distance": None,
            "noise": {"kind": "gaussian, sigma = sqrt((0.01*model)^2 + (0.003*peak)^2)",
                      "relative": rel, "floor_fraction_of_peak": floor_frac, "y_error_given": True},
            "features": {"emission_spikes": spikes,
                         "note": "spikes are added to y only; y_error is the plain noise sigma"},
            "grid": "380-1000 nm, step 1 nm",
        },
    }


# ---------------------------------------------------------------------------
# Laboratory samples (requests for POST /v1/light and POST /v1/hot-body), with their truth computed
# here, independently of planckton: colorimetry by plain summation over the CIE 5 nm table and the
# correlated colour temperature by brute-force search for the nearest point of the Planckian locus.

REPO = os.path.dirname(HERE)
CMF_2DEG = "cie1931-2deg-cmf.csv"
CMF_DIRS = [os.path.join(REPO, "core", "data"), os.path.join(os.path.dirname(REPO), "shared", "colorimetry")]


def read_cmf(name=CMF_2DEG):
    """The CIE colour-matching functions (wavelength nm, x-bar, y-bar, z-bar at 5 nm, 360-830 nm)
    from core/data/, or from the shared colorimetry tables the repository copies them from.
    Source of the table: CIE 015:2018 Colorimetry, 4th ed. (standard observer tables)."""
    for d in CMF_DIRS:
        path = os.path.join(d, name)
        if os.path.exists(path):
            with open(path, encoding="ascii") as fh:
                rows = [ln.strip().split(",") for ln in fh if ln.strip() and not ln.startswith("#")]
            data = np.array(rows[1:], dtype=float)   # rows[0] is the header
            return data[:, 0], data[:, 1:].T
    raise SystemExit("make_samples.py: %s not found in %s" % (name, " or ".join(CMF_DIRS)))


def tristimulus(cmf, lam_nm, power):
    """X, Y, Z (Y = 100) of a relative SPD: the SPD linearly interpolated to the table's 5 nm grid
    (zero outside the data) and summed with the colour-matching functions (CIE 015:2018 §7)."""
    wl, bars = cmf
    p = np.interp(wl, lam_nm, power, left=0.0, right=0.0)
    xyz = bars @ p
    return 100.0 * xyz / xyz[1]


def chromaticities(xyz):
    """CIE 1931 xy, CIE 1960 uv and CIE 1976 u'v' of tristimulus values."""
    X, Y, Z = (float(v) for v in xyz)
    s = X + Y + Z
    d = X + 15.0 * Y + 3.0 * Z
    return {"X": X, "Y": Y, "Z": Z, "x": X / s, "y": Y / s, "u": 4.0 * X / d, "v": 6.0 * Y / d,
            "u_prime": 4.0 * X / d, "v_prime": 9.0 * Y / d}


def locus_uv(cmf, temps):
    """CIE 1960 uv of Planck's law at each temperature (the same 5 nm summation)."""
    wl, bars = cmf
    b = planck_lambda(wl[:, None] * 1e-9, np.asarray(temps, dtype=float)[None, :])
    x, y, z = bars @ b
    d = x + 15.0 * y + 3.0 * z
    return 4.0 * x / d, 6.0 * y / d


def nearest_locus(cmf, u, v):
    """Brute force: the Planckian locus point nearest to (u, v) in CIE 1960 uv over 1000-20000 K
    (a geometric grid of 40001 temperatures, then a grid of 4001 between the coarse neighbours).
    Returns (T, Duv) with Duv > 0 above the locus (v larger than at the nearest locus point)."""
    temps = np.geomspace(1000.0, 20000.0, 40001)
    lu, lv = locus_uv(cmf, temps)
    i = int(np.argmin((lu - u) ** 2 + (lv - v) ** 2))
    fine = np.linspace(temps[max(i - 1, 0)], temps[min(i + 1, temps.size - 1)], 4001)
    fu, fv = locus_uv(cmf, fine)
    dist = np.hypot(fu - u, fv - v)
    j = int(np.argmin(dist))
    return float(fine[j]), float(math.copysign(dist[j], v - fv[j]))


def distribution_temperature(lam_nm, power, lo_nm=380.0, hi_nm=780.0):
    """Least-squares Planck fit of a relative SPD over [lo, hi] nm, equal weights, the scale in
    closed form at each temperature; a grid over ln T refined by golden-section search."""
    keep = (lam_nm >= lo_nm) & (lam_nm <= hi_nm)
    lam, y = lam_nm[keep] * 1e-9, power[keep]

    def cost(ln_t):
        b = planck_lambda(lam, math.exp(ln_t))
        s = float(y @ b) / float(b @ b)
        r = y - s * b
        return float(r @ r)

    grid = np.linspace(math.log(1000.0), math.log(20000.0), 601)
    k = int(np.argmin([cost(g) for g in grid]))
    a, b = grid[max(k - 1, 0)], grid[min(k + 1, grid.size - 1)]
    g = (math.sqrt(5.0) - 1.0) / 2.0
    for _ in range(200):
        c1, c2 = b - g * (b - a), a + g * (b - a)
        if cost(c1) < cost(c2):
            b = c2
        else:
            a = c1
    return math.exp(0.5 * (a + b))


def radiance_temperature(lam_m, radiance_w_m2_sr_m):
    """Planck's law inverted at one wavelength: T = (hc/(lambda k)) / ln(1 + 2hc^2/(lambda^5 L))."""
    return H * C / (lam_m * K) / math.log1p(2.0 * H * C ** 2 / (lam_m ** 5 * radiance_w_m2_sr_m))


def ratio_temperature(l1_m, r1, l2_m, r2):
    """The T at which B(l1, T)/B(l2, T) = r1/r2 (exact Planck law), by bisection on ln T."""
    target = math.log(r1 / r2)

    def f(ln_t):
        t = math.exp(ln_t)
        return math.log(planck_lambda(l1_m, t) / planck_lambda(l2_m, t)) - target

    a, b = math.log(100.0), math.log(1e6)
    for _ in range(200):
        m = 0.5 * (a + b)
        if (f(a) < 0) == (f(m) < 0):
            a = m
        else:
            b = m
    return math.exp(0.5 * (a + b))


def written(values, fmt):
    """The numbers as the JSON file holds them (the truth is computed from these)."""
    return np.array([float(fmt % v) for v in values])


def light_truth(cmf, lam, spd):
    c = chromaticities(tristimulus(cmf, lam, spd))
    t, duv = nearest_locus(cmf, c["u"], c["v"])
    c.update({"cct_K": t, "duv": duv, "cct_withheld": abs(duv) > 0.05,
              "method": "5 nm summation with the CIE 1931 2-degree colour-matching functions (360-830 nm, "
                        "SPD interpolated linearly, zero outside the data); CCT and Duv by brute-force search "
                        "for the nearest Planckian locus point in CIE 1960 uv, 1000-20000 K"})
    return c


def cinder_lamp(seed, cmf):
    rng = np.random.default_rng(seed)
    t_body = 3000.0
    ramp_slope, bump = -0.05, 0.08
    lam = np.arange(360.0, 830.0 + 0.5, 1.0)                     # nm, 471 points
    ramp = 1.0 + ramp_slope * (lam - 595.0) / 235.0              # -5 % per half-band: a slightly bluer envelope
    hump = 1.0 + bump * np.exp(-0.5 * ((lam - 540.0) / 60.0) ** 2)   # a gentle green excess: Duv > 0
    model = planck_lambda(lam * 1e-9, t_body) * ramp * hump
    model = 100.0 * model / float(np.interp(560.0, lam, model))  # relative, 100 at 560 nm
    rel = 0.002
    y = model * (1.0 + rel * rng.normal(0.0, 1.0, lam.size))
    ys = written(y, "%.6e")
    col = light_truth(cmf, lam, ys)
    return {
        "stem": "cinder-lamp-ql7", "seed": seed, "endpoint": "/v1/light", "cli": "light",
        "object": "lamp QL-7, tungsten-halogen lamp of the Cinder Street photometry lab (invented)",
        "request": {"spectrum": {"x": fmt_array(lam, "%.3f"), "x_unit": "nm", "y": fmt_array(y, "%.6e"),
                                 "y_unit": "relative/nm"},
                    "observer": "cie1931_2deg"},
        "truth": {
            "n_points": int(lam.size),
            "generation": {"body_temperature_K": t_body,
                           "ramp": "1 + (%g) (lambda - 595 nm) / 235 nm" % ramp_slope,
                           "hump": "1 + %g exp(-0.5 ((lambda - 540 nm) / 60 nm)^2)" % bump,
                           "normalisation": "100 at 560 nm",
                           "noise": {"kind": "gaussian, relative", "relative": rel, "y_error_given": False}},
            "grid": "360-830 nm, step 1 nm",
            "colorimetry": col,
            "distribution_temperature_K": distribution_temperature(lam, ys),
            "distribution_temperature_method": "least squares, equal weights, scale free, 380-780 nm",
        },
    }


def cinder_led(seed, cmf):
    rng = np.random.default_rng(seed)
    lam = np.arange(360.0, 830.0 + 0.5, 1.0)                     # nm, 471 points
    blue = {"center_nm": 450.0, "sigma_nm": 10.5, "amplitude": 1.0}
    phosphor = [{"center_nm": 550.0, "sigma_nm": 40.0, "amplitude": 0.5},
                {"center_nm": 610.0, "sigma_nm": 60.0, "amplitude": 0.4}]
    model = np.zeros_like(lam)
    for g in [blue] + phosphor:
        model += g["amplitude"] * np.exp(-0.5 * ((lam - g["center_nm"]) / g["sigma_nm"]) ** 2)
    model /= float(np.max(model))                                 # relative, 1 at the maximum
    rel = 0.002
    y = model * (1.0 + rel * rng.normal(0.0, 1.0, lam.size))
    ys = written(y, "%.6e")
    return {
        "stem": "cinder-led-w2", "seed": seed, "endpoint": "/v1/light", "cli": "light",
        "object": "white LED W-2 of the Cinder Street photometry lab (invented)",
        "request": {"spectrum": {"x": fmt_array(lam, "%.3f"), "x_unit": "nm", "y": fmt_array(y, "%.6e"),
                                 "y_unit": "relative/nm"}},
        "truth": {
            "n_points": int(lam.size),
            "generation": {"blue_peak": blue, "phosphor_hump": phosphor,
                           "normalisation": "1 at the maximum",
                           "noise": {"kind": "gaussian, relative", "relative": rel, "y_error_given": False},
                           "observer_in_request": "none (the default, CIE 1931 2-degree)"},
            "grid": "360-830 nm, step 1 nm",
            "colorimetry": light_truth(cmf, lam, ys),
        },
    }


def kiln_window(seed):
    rng = np.random.default_rng(seed)
    t_true = 1500.0
    emissivity_sample, window_transmittance = 0.50, 0.70
    emissivity = emissivity_sample * window_transmittance        # 0.35: what the pyrometer sees, grey
    lam = np.arange(1000.0, 2500.0 + 0.5, 5.0)                   # nm, 301 points
    model = emissivity * planck_lambda(lam * 1e-9, t_true) / W_M2_SR_NM
    rel = 0.01
    sigma = rel * model
    y = model + rng.normal(0.0, 1.0, lam.size) * sigma
    at_nm, pair_nm = [1200, 1600, 2000], [1100, 2300]
    ys = written(y, "%.6e")

    def data_at(nm):
        return float(ys[int(np.argmin(np.abs(lam - nm)))]) * W_M2_SR_NM

    model_at = {nm: emissivity * float(planck_lambda(nm * 1e-9, t_true)) for nm in at_nm + pair_nm}
    return {
        "stem": "kiln-window-k4", "seed": seed, "endpoint": "/v1/hot-body", "cli": "hot-body",
        "object": "furnace sample K-4 seen through a kiln window, Cinder Street photometry lab (invented)",
        "request": {"spectrum": {"x": fmt_array(lam, "%.3f"), "x_unit": "nm", "y": fmt_array(y, "%.6e"),
                                 "y_unit": "W/m2/sr/nm", "y_error": fmt_array(sigma, "%.4e")},
                    "emissivity": "constant",
                    "radiance_temperature_at": at_nm,
                    "ratio_pair": pair_nm},
        "truth": {
            "n_points": int(lam.size),
            "temperature_K": t_true,
            "emissivity": {"kind": "constant", "value": emissivity,
                           "note": "grey: sample emissivity %.2f times window transmittance %.2f, the same at "
                                   "every wavelength" % (emissivity_sample, window_transmittance)},
            "noise": {"kind": "gaussian, sigma = 0.01*model", "relative": rel, "y_error_given": True},
            "grid": "1000-2500 nm, step 5 nm",
            "radiance_temperatures": [
                {"wavelength_nm": nm, "value_K": radiance_temperature(nm * 1e-9, model_at[nm]),
                 "from_data_K": radiance_temperature(nm * 1e-9, data_at(nm))} for nm in at_nm],
            "radiance_temperature_note": "grey body: every radiance temperature lies below the true temperature",
            "ratio_temperature": {
                "pair_nm": pair_nm,
                "value_K": ratio_temperature(pair_nm[0] * 1e-9, model_at[pair_nm[0]],
                                             pair_nm[1] * 1e-9, model_at[pair_nm[1]]),
                "from_data_K": ratio_temperature(pair_nm[0] * 1e-9, data_at(pair_nm[0]),
                                                 pair_nm[1] * 1e-9, data_at(pair_nm[1])),
                "note": "grey body: the emissivity cancels, so the ratio temperature of the model is the true "
                        "temperature; from_data_K uses the two noisy data points"},
        },
    }


def lab_entry(s):
    entry = {"name": s["stem"], "object": s["object"], "json": s["stem"] + ".json",
             "endpoint": s["endpoint"], "cli": "planckton %s %s.json" % (s["cli"], s["stem"]),
             "x_unit": s["request"]["spectrum"]["x_unit"], "y_unit": s["request"]["spectrum"]["y_unit"],
             "seed": s["seed"]}
    entry.update(s["truth"])
    return entry


def cli_flags(s):
    return "--x-unit %s --y-unit %s" % (s["x_unit"], s["y_unit"])


def main():
    makers = [hot_star, cool_star, sunlike_star, bench_lamp]
    samples = [mk(BASE_SEED + i) for i, mk in enumerate(makers)]
    truth = {
        "about": "Synthetic demo spectra for planckton; the scenario (Tallow Moor Observatory, TMS survey "
                 "stars, Cinder Street photometry lab, bench lamp QL-3) is invented. Made by make_samples.py.",
        "constants": {"h": H, "c": C, "k": K, "source": "CODATA 2018 exact values"},
        "base_seed": BASE_SEED,
        "samples": [],
    }
    for s in samples:
        write_sample(s)
        entry = {
            "name": s["stem"],
            "object": s["object"],
            "csv": s["stem"] + ".csv",
            "json": s["stem"] + ".json",
            "x_unit": s["x_unit"],
            "y_unit": s["y_unit"],
            "n_points": int(len(s["x"])),
            "seed": s["seed"],
            "cli_flags": cli_flags(s),
            "cli_note": "cli_flags give the units of the CSV only; the exclude ranges, loss and distance "
                        "are carried by the JSON request",
            "exclude": [[lo, hi] for lo, hi in s["exclude"]],
            "options": json.loads(dump_json(s["options"])),
        }
        entry.update(s["truth"])
        truth["samples"].append(entry)
    lab_makers = [cinder_lamp, cinder_led, kiln_window]
    cmf = read_cmf()
    seed = BASE_SEED + len(makers)
    lab = []
    for i, mk in enumerate(lab_makers):
        lab.append(mk(seed + i, cmf) if mk is not kiln_window else mk(seed + i))
    truth["lab_samples"] = []
    for s in lab:
        write_text(s["stem"] + ".json", dump_json(s["request"]) + "\n")
        truth["lab_samples"].append(lab_entry(s))
    write_text("truth.json", dump_json(truth) + "\n")
    write_batch(samples)
    if "--check" in sys.argv[1:]:
        sys.exit(check(truth) | check_lab(truth, cmf))


# ---------------------------------------------------------------------------
# --check: fit every written file and compare with the truth (needs scipy).

def read_csv(path):
    with open(path, encoding="ascii") as fh:
        rows = [ln.strip() for ln in fh if ln.strip() and not ln.startswith("#")]
    header = rows[0].split(",")
    data = np.array([[float(v) for v in r.split(",")] for r in rows[1:]])
    return header, data


def check(truth):
    from scipy.optimize import curve_fit, least_squares

    factors = {"erg/s/cm2/Angstrom": ERG_S_CM2_ANGSTROM, "W/m2/um": W_M2_UM, "mJy": MJY,
               "W/m2/sr/nm": W_M2_SR_NM}
    failures = 0
    for e in truth["samples"]:
        with open(os.path.join(HERE, e["json"]), encoding="ascii") as fh:
            req = json.load(fh)
        sp = req["spectrum"]
        x, y = np.array(sp["x"]), np.array(sp["y"])
        err = np.array(sp["y_error"]) if "y_error" in sp else None

        # the CSV must hold the same numbers as the JSON request
        header, data = read_csv(os.path.join(HERE, e["csv"]))
        same = header == (["x", "y", "y_error"] if err is not None else ["x", "y"]) \
            and np.array_equal(data[:, 0], x) and np.array_equal(data[:, 1], y) \
            and (err is None or np.array_equal(data[:, 2], err))

        keep = np.ones(x.size, dtype=bool)
        for lo, hi in sp.get("exclude", []):
            keep &= ~((x >= lo) & (x <= hi))
        f = factors[sp["y_unit"]]
        if sp["x_unit"] == "THz":
            def planck(xx, t):
                return planck_nu(xx * 1e12, t)
        else:
            def planck(xx, t):
                return planck_lambda(xx * 1e-9, t)
        s_true = e["scale"]["value"]

        def model(xx, t, s_rel):
            return s_rel * s_true * planck(xx, t) / f

        p0 = (0.8 * e["temperature_K"], 1.0)   # start off the truth on purpose
        xk, yk = x[keep], y[keep]
        ek = err[keep] if err is not None else None
        loss = req["options"].get("loss")
        if loss:
            def resid(p):
                return (model(xk, *p) - yk) / ek
            p0r = curve_fit(model, xk, yk, p0=p0, sigma=ek, absolute_sigma=True)[0]  # plain LS start
            res = least_squares(resid, p0r, loss=loss["kind"], f_scale=float(loss["scale"]), x_scale="jac")
            p = res.x
            cov = np.linalg.inv(res.jac.T @ res.jac)
            how = "least_squares(loss=%s, f_scale=%s), plain-LS T=%.1f" % (loss["kind"], loss["scale"], p0r[0])
        elif ek is not None:
            p, cov = curve_fit(model, xk, yk, p0=p0, sigma=ek, absolute_sigma=True)
            how = "curve_fit(sigma=y_error, absolute_sigma=True)"
        else:
            p, cov = curve_fit(model, xk, yk, p0=p0)
            how = "curve_fit(no sigma: errors from scatter)"
        t_fit, t_err = p[0], math.sqrt(cov[0, 0])
        s_fit, s_err = p[1] * s_true, math.sqrt(cov[1, 1]) * s_true
        z_t = (t_fit - e["temperature_K"]) / t_err
        z_s = (s_fit - s_true) / s_err
        ok = same and abs(z_t) < 2.0 and abs(z_s) < 3.0
        extra = ""
        dist = req["options"].get("distance")
        if dist:
            d_m = float(dist["value"]) * PARSEC
            r_fit, r_true = d_m * math.sqrt(s_fit / math.pi), e["radius_m"]
            extra = "  R = %.4f R_sun (true %.4f)" % (r_fit / R_SUN, r_true / R_SUN)
            ok = ok and abs(r_fit - r_true) < 3.0 * 0.5 * s_err / s_fit * r_true
        failures += not ok
        print("%-22s %s  T = %.1f +- %.1f K (true %.0f, %+.2f sigma)  scale = %.4e +- %.1e (true %.4e, %+.2f sigma)"
              "%s  n=%d/%d  csv==json:%s  [%s]"
              % (e["name"], "OK  " if ok else "FAIL", t_fit, t_err, e["temperature_K"], z_t,
                 s_fit, s_err, s_true, z_s, extra, int(keep.sum()), x.size, same, how))
    return 1 if failures else 0


def check_lab(truth, cmf):
    """Re-reads the lab requests: the colorimetry of the lamp and the LED again from the file, and a
    grey-body curve_fit of the kiln spectrum against its truth (within 2 sigma)."""
    from scipy.optimize import curve_fit

    failures = 0
    for e in truth["lab_samples"]:
        with open(os.path.join(HERE, e["json"]), encoding="ascii") as fh:
            sp = json.load(fh)["spectrum"]
        x, y = np.array(sp["x"]), np.array(sp["y"])
        if e["endpoint"] == "/v1/light":
            c = light_truth(cmf, x, y)
            ok = abs(c["cct_K"] - e["colorimetry"]["cct_K"]) < 1e-6 and abs(c["duv"] - e["colorimetry"]["duv"]) < 1e-12
            print("%-22s %s  CCT = %.2f K  Duv = %+.5f  xy = (%.5f, %.5f)"
                  % (e["name"], "OK  " if ok else "FAIL", c["cct_K"], c["duv"], c["x"], c["y"]))
        else:
            err = np.array(sp["y_error"])

            def model(xx, t, eps):
                return eps * planck_lambda(xx * 1e-9, t) / W_M2_SR_NM

            p, cov = curve_fit(model, x, y, p0=(1200.0, 0.5), sigma=err, absolute_sigma=True)
            z_t = (p[0] - e["temperature_K"]) / math.sqrt(cov[0, 0])
            z_e = (p[1] - e["emissivity"]["value"]) / math.sqrt(cov[1, 1])
            ok = abs(z_t) < 2.0 and abs(z_e) < 2.0
            print("%-22s %s  T = %.2f +- %.2f K (true %.0f, %+.2f sigma)  emissivity = %.4f +- %.4f (true %.2f, "
                  "%+.2f sigma)  [curve_fit(sigma=y_error, absolute_sigma=True)]"
                  % (e["name"], "OK  " if ok else "FAIL", p[0], math.sqrt(cov[0, 0]), e["temperature_K"], z_t,
                     p[1], math.sqrt(cov[1, 1]), e["emissivity"]["value"], z_e))
        failures += not ok
    return 1 if failures else 0


if __name__ == "__main__":
    main()

"""Photometry on POST /v1/fit end to end against the real server: band measurements as JSON and as a
CSV table, shipped bands and a curve given inline, upper limits, a batch mixing photometry and
spectra, and bad band measurements answered with problem documents that point at the offending
value. Every answer is validated against openapi/openapi.yaml (JSON Schema Draft 2020-12).

Outside sources, named again beside each check:
- The magnitudes a black body has through the shipped curves are computed here with numpy, from the
  published definitions and the curve files of core/data/passbands, independently of the service: the
  photon-counting band average <F_nu> = int F_nu S dlambda / lambda / int S dlambda / lambda (Bessell &
  Murphy 2012, PASP 124, 140, appendix A) by the trapezoid rule on the curve refined 64 times (S
  linear between its samples), B_nu with the CODATA 2018 exact h, c, k, and m_AB = -2.5 log10(<F_nu> /
  3631 Jy) (Oke & Gunn 1983, ApJ 266, 713).
- The pivot wavelength: lambda_p^2 = int S lambda / int S / lambda for photon counters (Tokunaga &
  Vacca 2005, PASP 117, 421, eq. A11), the same numpy integration.
The synthetic magnitudes are noise-free with errors of 0.02 mag, so the fitted temperature must be the
black body's to 0.1 %."""
import json
import math
import os

import sys

sys.dont_write_bytecode = True  # no __pycache__ in the source tree
import harness  # noqa: E402
from harness import Checks, OpenAPI, start_checked_server, check_problem, describe, http, is_response, json_of, media_type

args = harness.parse_args(__doc__)
checks = Checks(args.require_schema)
schema = OpenAPI(args.repo)
PASSBANDS = os.path.join(args.repo, "core", "data", "passbands")
FIT, BATCH = "/v1/fit", "/v1/fit/batch"
JSON_CT = {"Content-Type": "application/json"}
CSV_CT = {"Content-Type": "text/csv"}
NDJSON_CT = {"Content-Type": "application/x-ndjson"}

# CODATA 2018 exact SI values (h, c, k).
H, C, K = 6.62607015e-34, 299792458.0, 1.380649e-23
AB_ZERO_POINT_JY = 3631.0   # Oke & Gunn 1983, ApJ 266, 713
JANSKY = 1e-26              # W m^-2 Hz^-1
MAG_PER_LN_FLUX = 2.5 / math.log(10)
REFINE = 64                 # trapezoid sub-intervals per sample interval of a curve file

# Photon-counting bands the shipped catalogue quotes as band averages (GET /v1/passbands: "quoted":
# band_average), blue to red.
BANDS = ["johnson-u", "johnson-b", "johnson-v", "cousins-r", "cousins-i", "2mass-j", "2mass-h", "2mass-ks"]
TEMPERATURE_TOLERANCE = 1e-3   # relative: the brief's 0.1 %
MAG_ERROR = 0.02
SCALE = {4000.0: 1.0e-18, 20000.0: 1.0e-20}   # solid angles (sr) of the synthetic sources


# ---- numpy reimplementation of synthetic photometry (outside the service) ----------------------

def read_curve(band):
    """A curve file of core/data/passbands: wavelengths (m) and responses."""
    import numpy as np
    curve = harness.read_passband_file(args.repo, band)
    return np.array(curve["wavelength_um"]) * 1e-6, np.array(curve["response"])


def refined(band):
    """The curve with each sample interval cut into REFINE pieces, the response linear in between."""
    import numpy as np
    w, s = read_curve(band)
    t = np.linspace(0.0, 1.0, REFINE + 1)[:-1]
    fine_w = (w[:-1, None] + (w[1:] - w[:-1])[:, None] * t).ravel()
    fine_s = (s[:-1, None] + (s[1:] - s[:-1])[:, None] * t).ravel()
    return np.append(fine_w, w[-1]), np.append(fine_s, s[-1])


def trapezoid(y, x):
    import numpy as np
    return (getattr(np, "trapezoid", None) or np.trapz)(y, x)


def planck_nu(nu, temperature):
    """B_nu (W m^-2 Hz^-1 sr^-1), CODATA 2018 exact h, c, k."""
    import numpy as np
    return 2.0 * H * nu ** 3 / C ** 2 / np.expm1(H * nu / (K * temperature))


def band_average_f_nu(band, temperature, solid_angle):
    """Photon-counting band average <F_nu> = int F_nu S dlambda/lambda / int S dlambda/lambda
    (Bessell & Murphy 2012, PASP 124, 140, appendix A), W m^-2 Hz^-1."""
    w, s = refined(band)
    f_nu = solid_angle * planck_nu(C / w, temperature)
    return trapezoid(f_nu * s / w, w) / trapezoid(s / w, w)


def ab_magnitude(band, temperature, solid_angle):
    """m_AB = -2.5 log10(<F_nu> / 3631 Jy) (Oke & Gunn 1983, ApJ 266, 713)."""
    return -2.5 * math.log10(band_average_f_nu(band, temperature, solid_angle) / (AB_ZERO_POINT_JY * JANSKY))


def pivot_nm(band):
    """Photon counter: lambda_p^2 = int S lambda / int S / lambda (Tokunaga & Vacca 2005, eq. A11), nm."""
    w, s = refined(band)
    return math.sqrt(trapezoid(s * w, w) / trapezoid(s / w, w)) * 1e9


def ab_photometry(temperature, bands=BANDS):
    solid_angle = SCALE[temperature]
    return [{"band": b, "value": ab_magnitude(b, temperature, solid_angle), "error": MAG_ERROR, "unit": "ABmag"}
            for b in bands]


# ---- helpers ---------------------------------------------------------------------------------

def rel(a, b):
    return abs(a / b - 1.0) if isinstance(a, (int, float)) and isinstance(b, (int, float)) and b else math.inf


def temperature_of(doc):
    try:
        return doc["parameters"]["temperature"]["value"]
    except (KeyError, TypeError):
        return None


def fitted(label, r):
    """200 application/json, valid against the FitResponse schema; returns the document or None."""
    ok = is_response(r) and r.status_code == 200 and media_type(r) == "application/json"
    checks.check(f"{label}: 200 application/json", ok, "" if ok else describe(r))
    doc = json_of(r) if ok else None
    if ok and doc is None:
        checks.check(f"{label}: body parses as JSON", False, describe(r))
    if doc is not None:
        schema.check(checks, f"{label}: response matches the OpenAPI schema", doc, FIT, "post", 200, "application/json")
    return doc


def post_json(server, document):
    return http("POST", server, FIT, data=harness.compact(document), headers=JSON_CT)


def table_text(measurements, columns=("band", "value", "error", "unit")):
    """A photometry CSV table; numbers written with repr so that they read back as the same doubles."""
    lines = ["# photometry of a black body, computed in the test", ",".join(columns)]
    for m in measurements:
        cells = []
        for c in columns:
            v = m.get(c)
            cells.append("" if v is None else ("yes" if v is True else repr(v) if isinstance(v, float) else str(v)))
        lines.append(",".join(cells))
    return "\n".join(lines) + "\n"


# ---- (a) AB magnitudes of black bodies ---------------------------------------------------------

def black_body_checks(server):
    docs = {}
    for temperature in SCALE:
        label = f"AB magnitudes of a {temperature:.0f} K black body"
        photometry = ab_photometry(temperature)
        doc = fitted(label, post_json(server, {"photometry": photometry}))
        if doc is None:
            continue
        docs[temperature] = (photometry, doc)
        t = temperature_of(doc)
        # numpy band averages (Bessell & Murphy 2012 appendix A) and m_AB (Oke & Gunn 1983, 3631 Jy).
        checks.check(f"{label}: fitted T within {TEMPERATURE_TOLERANCE:.1%} of {temperature:.0f} K (numpy synthetic "
                     "photometry, Bessell & Murphy 2012; AB zero point 3631 Jy, Oke & Gunn 1983)",
                     rel(t, temperature) <= TEMPERATURE_TOLERANCE, f"fit {t!r} K, off by {rel(t, temperature):.2e}")
        s = doc["parameters"]["scale"]
        checks.check(f"{label}: fitted solid angle within 0.5 % of {SCALE[temperature]:.1e} sr",
                     rel(s["value"], SCALE[temperature]) <= 5e-3 and s["unit"] == "sr", f"fit {s['value']!r} {s['unit']}")
        checks.check(f"{label}: status converged", doc.get("status") == "converged", doc.get("status"))
        bands = doc.get("bands") or []
        checks.check(f"{label}: one bands[] entry per measurement, in order",
                     [b.get("band") for b in bands] == BANDS, repr([b.get("band") for b in bands]))
        # The model magnitude of each band against the numpy magnitude (the noise-free data).
        worst = max((abs(b["model"] - m["value"]) for b, m in zip(bands, photometry)), default=math.inf)
        checks.check(f"{label}: every band's model within 0.001 mag of the numpy AB magnitude", worst <= 1e-3,
                     f"worst {worst:.2e} mag")
        zp_ok = all(b.get("zero_point", {}).get("value") == AB_ZERO_POINT_JY and b["zero_point"].get("unit") == "Jy"
                    and "Oke & Gunn 1983" in b["zero_point"].get("source", "") for b in bands)
        checks.check(f"{label}: every band's zero point is 3631 Jy, Oke & Gunn 1983", zp_ok and bands,
                     repr(bands[0].get("zero_point") if bands else None))
        # Pivot wavelengths against the numpy integration of the curve files (Tokunaga & Vacca 2005, eq. A11).
        off = [f"{b['band']}: {b['pivot_wavelength_nm']:.3f} vs {pivot_nm(b['band']):.3f}" for b in bands
               if rel(b["pivot_wavelength_nm"], pivot_nm(b["band"])) > 1e-4]
        checks.check(f"{label}: pivot wavelengths agree to 1e-4 with numpy (Tokunaga & Vacca 2005, eq. A11)", not off,
                     "; ".join(off))
        stats = doc.get("statistics", {})
        checks.check(f"{label}: statistics count {len(BANDS)} detections, no upper limits, errors given",
                     stats.get("bands_given") == len(BANDS) and stats.get("detections") == len(BANDS)
                     and stats.get("upper_limits") == 0 and stats.get("errors") == "given"
                     and stats.get("degrees_of_freedom") == len(BANDS) - 2, repr(stats)[:300])
        checks.check(f"{label}: chi-square of noise-free data below 1e-3",
                     isinstance(stats.get("chi_square"), float) and stats["chi_square"] < 1e-3, repr(stats.get("chi_square")))
        inp = doc.get("input", {})
        checks.check(f"{label}: input names {len(BANDS)} measurements and no systematic error",
                     inp.get("photometry") == len(BANDS) and inp.get("systematic_error") == 0.0, repr(inp)[:200])
    return docs


# ---- (b) the same data as a CSV table ---------------------------------------------------------------

def table_checks(server, cool):
    if cool is None:
        return
    photometry, _ = cool
    systematic = 0.01
    json_doc = fitted("4000 K JSON with options.systematic_error 0.01",
                      post_json(server, {"photometry": photometry, "options": {"systematic_error": systematic}}))
    text = table_text(photometry)
    r = http("POST", server, FIT + "?" + harness.query([("systematic_error", str(systematic))]), data=text.encode(),
             headers=CSV_CT)
    csv_doc = fitted("4000 K as a CSV table (band,value,error,unit) with ?systematic_error=0.01", r)
    if json_doc is None or csv_doc is None:
        return
    t_json, t_csv = temperature_of(json_doc), temperature_of(csv_doc)
    checks.check("CSV table and JSON give the same temperature", t_json == t_csv, f"JSON {t_json!r}, CSV {t_csv!r}")
    diff = harness.strict_diff(csv_doc, json_doc)
    checks.check("CSV table and JSON give the same document", diff is None, diff or "")
    checks.check("the table's systematic_error is applied (input.systematic_error 0.01)",
                 csv_doc.get("input", {}).get("systematic_error") == systematic, repr(csv_doc.get("input")))
    # sigma^2 + (2.5 / ln 10 f)^2 for magnitudes (photometry.h; the linearised floor).
    want = math.hypot(MAG_ERROR, MAG_PER_LN_FLUX * systematic)
    got = [b.get("sigma_used") for b in csv_doc.get("bands", [])]
    checks.check(f"every band's sigma_used is hypot(0.02, 2.5/ln10 x 0.01) = {want:.6f} mag",
                 got and all(isinstance(g, float) and rel(g, want) < 1e-12 for g in got), repr(got[:3]))
    # The CLI with the same table and flag prints the same document (DESIGN.md: the CLI prints exactly it).
    path = os.path.join(os.environ.get("TMPDIR", "/tmp"), f"planckton-photometry-{os.getpid()}.csv")
    try:
        with open(path, "w", encoding="utf-8") as f:
            f.write(text)
        code, cli_doc, err = harness.run_cli(args.cli, ["fit", path, "--systematic-error", str(systematic)])
    finally:
        if os.path.exists(path):
            os.remove(path)
    diff = harness.strict_diff(cli_doc, csv_doc) if cli_doc is not None else "no document"
    checks.check("the CLI prints the same document for the table file and --systematic-error", code == 0 and diff is None,
                 f"exit {code}; {diff or ''} {err.strip()[:200]}")


# ---- (c) a curve given inline ------------------------------------------------------------------

def inline_checks(server, cool):
    if cool is None:
        return
    photometry, shipped = cool
    band = "2mass-j"
    w, s = read_curve(band)
    inline = {"id": "my-2mass-j-copy", "wavelength": [float(x) * 1e9 for x in w[::-1]], "wavelength_unit": "nm",
              "response": [float(x) for x in s[::-1]], "detector": "photon_counting"}
    measurements = [dict(m, band=inline) if m["band"] == band else m for m in photometry]
    doc = fitted(f"{band} given inline (nm, decreasing wavelengths)", post_json(server, {"photometry": measurements}))
    if doc is None:
        return
    t_inline, t_shipped = temperature_of(doc), temperature_of(shipped)
    checks.check(f"inline {band} fits like the shipped id (T to 1e-9)", rel(t_inline, t_shipped) <= 1e-9,
                 f"inline {t_inline!r}, shipped {t_shipped!r}")
    i = BANDS.index(band)
    got, want = doc["bands"][i], shipped["bands"][i]
    checks.check("the inline band is answered under its own id", got.get("band") == inline["id"], repr(got.get("band")))
    checks.check(f"inline {band}: same pivot wavelength and model as the shipped id (1e-9)",
                 rel(got["pivot_wavelength_nm"], want["pivot_wavelength_nm"]) <= 1e-9
                 and abs(got["model"] - want["model"]) <= 1e-9, f"pivot {got['pivot_wavelength_nm']!r} vs "
                 f"{want['pivot_wavelength_nm']!r}, model {got['model']!r} vs {want['model']!r}")


# ---- (d) upper limits ------------------------------------------------------------------------------

def upper_limit_checks(server, cool):
    if cool is None:
        return
    photometry, base = cool
    limit_band = "sdss-u"
    # The black body's flux in the limit's band, numpy band average as above, in mJy.
    truth_mjy = band_average_f_nu(limit_band, 4000.0, SCALE[4000.0]) / (1e-3 * JANSKY)
    far = {"band": limit_band, "value": 1000.0 * truth_mjy, "error": 200.0 * truth_mjy, "unit": "mJy", "upper_limit": True}
    low = {"band": limit_band, "value": 0.3 * truth_mjy, "error": 0.1 * truth_mjy, "unit": "mJy", "upper_limit": True}
    far_doc = fitted("a 5-sigma upper limit 1000 x above the model", post_json(server, {"photometry": photometry + [far]}))
    low_doc = fitted("a 3-sigma upper limit at 0.3 x the model", post_json(server, {"photometry": photometry + [low]}))
    t0 = temperature_of(base)
    if far_doc is not None:
        checks.check("an upper limit far above the model changes nothing (T to 1e-7)", rel(temperature_of(far_doc), t0) <= 1e-7,
                     f"{temperature_of(far_doc)!r} vs {t0!r} K")
        b = far_doc["bands"][-1]
        stats = far_doc["statistics"]
        checks.check("the far limit: upper_limit true, model near the numpy flux, residual about 0",
                     b.get("upper_limit") is True and rel(b["model"], truth_mjy) < 1e-3 and abs(b["residual"]) < 1e-2,
                     f"model {b.get('model')!r} mJy (numpy {truth_mjy:.6g}), residual {b.get('residual')!r}")
        checks.check("the far limit: statistics count 1 upper limit and say how it enters chi-square",
                     stats.get("upper_limits") == 1 and stats.get("detections") == len(BANDS)
                     and "Sawicki 2012" in stats.get("upper_limit_terms", ""), repr(stats)[:300])
        checks.check("the far limit adds nothing to chi-square (< 1e-4)",
                     abs(stats["chi_square"] - base["statistics"]["chi_square"]) < 1e-4,
                     f"{stats['chi_square']!r} vs {base['statistics']['chi_square']!r}")
    if low_doc is not None and far_doc is not None:
        m_low, m_far = low_doc["bands"][-1]["model"], far_doc["bands"][-1]["model"]
        checks.check(f"an upper limit below the model pulls the model in {limit_band} down", m_low < 0.999 * m_far,
                     f"model {m_low!r} mJy with the low limit, {m_far!r} mJy with the far one")
        t_low = temperature_of(low_doc)
        checks.check("... and the temperature down (less blue flux)", t_low < t0, f"{t_low!r} vs {t0!r} K")
        checks.check("... at a cost in chi-square", low_doc["statistics"]["chi_square"] > 1.0,
                     repr(low_doc["statistics"]["chi_square"]))
        checks.check("the low limit's residual is sqrt(-2 ln Phi(u)) > 0", low_doc["bands"][-1]["residual"] > 0.0,
                     repr(low_doc["bands"][-1]["residual"]))


# ---- other kinds of photometry answers the schema must take ------------------------------------------

def schema_coverage_checks(server):
    # Intensities: the scale is an emissivity, the bolometric radiance is derived.
    intensity = [{"band": b, "value": v, "error": 0.05 * v, "unit": "MJy/sr"}
                 for b, v in (("johnson-b", 1.0), ("johnson-v", 1.3), ("cousins-r", 1.2), ("2mass-j", 0.9))]
    doc = fitted("photometry in MJy/sr", post_json(server, {"photometry": intensity}))
    if doc is not None:
        checks.check("photometry in MJy/sr: the scale is an emissivity and the bolometric radiance is derived",
                     doc["parameters"]["scale"]["unit"] == "1" and "bolometric_radiance" in doc["derived"]
                     and doc["input"]["convention"].endswith("per steradian (each band's quoted flux density)"),
                     f"{doc['parameters']['scale']['unit']!r}, {list(doc['derived'])}, {doc['input']['convention']!r}")
    # No errors: equal fractional weights, the scatter estimated as a fraction of the flux.
    plain = [{"band": b, "value": v, "unit": "mJy"} for b, v in (("johnson-b", 1.0), ("johnson-v", 1.0), ("cousins-r", 1.2))]
    doc = fitted("photometry without errors", post_json(server, {"photometry": plain}))
    if doc is not None:
        stats = doc["statistics"]
        checks.check("photometry without errors: residual_scatter as a 'fraction of flux', chi-square null",
                     stats.get("errors") == "estimated from the residuals" and stats.get("chi_square") is None
                     and stats.get("residual_scatter", {}).get("unit") == "fraction of flux"
                     and all(b["error"] is None and b["sigma_used"] is None for b in doc["bands"]), repr(stats)[:300])
    # A Vega magnitude with a zero point of its own, and a flux per wavelength, with a distance.
    mixed = [{"band": "johnson-b", "value": 10.17, "error": 0.03, "unit": "Vegamag", "zero_point": {"value": 4000, "unit": "Jy"}},
             {"band": "johnson-v", "value": 9.02, "error": 0.02, "unit": "Vegamag"},
             {"band": "2mass-j", "value": 6.63, "error": 0.023, "unit": "Vegamag", "zero_point": 1594},
             {"band": "2mass-ks", "value": 1.0e-13, "error": 3.0e-15, "unit": "W/m2/um"}]
    doc = fitted("Vegamag with given zero points and W/m2/um, with a distance",
                 post_json(server, {"photometry": mixed, "options": {"distance": {"value": 14, "unit": "pc"}}}))
    if doc is not None:
        b = doc["bands"]
        checks.check("given zero points are used (to 1e-12) and said to be given",
                     rel(b[0]["zero_point"]["value"], 4000.0) < 1e-12 and rel(b[2]["zero_point"]["value"], 1594.0) < 1e-12
                     and b[0]["zero_point"]["source"] == "given with the measurement" == b[2]["zero_point"]["source"]
                     and "zero_point" not in b[3] and "radius" in doc["derived"], repr([x.get("zero_point") for x in b]))


# ---- (e) a batch ------------------------------------------------------------------------------------

def batch_checks(server, cool):
    if cool is None:
        return
    photometry, _ = cool
    good = {"id": "phot", "photometry": photometry}
    spectrum = {"id": "spec", **harness.planck_spectrum(40, temperature=5000.0)}
    bad = {"id": "bad-band", "photometry": [photometry[0], dict(photometry[1], band="johnson-q")]}
    body = "\n".join(harness.compact(d) for d in (good, spectrum, bad)) + "\n"
    r = http("POST", server, BATCH, data=body.encode(), headers=NDJSON_CT)
    ok = is_response(r) and r.status_code == 200 and media_type(r) == "application/x-ndjson"
    checks.check("batch of photometry, spectrum and bad photometry: 200 application/x-ndjson", ok, "" if ok else describe(r))
    if not ok:
        return
    lines = []
    for text in r.text.splitlines():
        if text.strip():
            try:
                lines.append(json.loads(text))
            except json.JSONDecodeError as e:
                checks.check("batch: every answer line is JSON", False, f"{e}: {text[:200]}")
                return
    checks.check("batch: one answer line per request line", len(lines) == 3, f"{len(lines)} lines")
    if len(lines) != 3:
        return
    for i, line in enumerate(lines):
        schema.check(checks, f"batch line {i}: matches the OpenAPI BatchLine schema", line, BATCH, "post", 200,
                     "application/x-ndjson")
    # Defect fixed with this test (core/api/fit_service.cpp, fit_batch_line): a line refused while it
    # was read (here: an unknown band) lost its "id" on the answer line.
    summary = [(l.get("index"), l.get("id"), l.get("status")) for l in lines]
    checks.check("batch: index, id and status of each line (200 photometry, 200 spectrum, 422 bad photometry)",
                 summary == [(0, "phot", 200), (1, "spec", 200), (2, "bad-band", 422)], repr(summary))
    single = json_of(post_json(server, good))
    diff = harness.strict_diff(lines[0].get("response"), single) if single is not None else "no single answer"
    checks.check("batch: the photometry line's response is the POST /v1/fit document", diff is None, diff or "")
    checks.check("batch: the spectrum line has no bands and a spectrum's statistics",
                 "bands" not in lines[1].get("response", {}) and "points_given" in lines[1].get("response", {}).get("statistics", {}),
                 repr(list(lines[1].get("response", {}))))
    problem = lines[2].get("problem", {})
    checks.check("batch: the bad line's problem points at /photometry/1/band", problem.get("pointer") == "/photometry/1/band",
                 repr(problem)[:300])


# ---- (f) bad photometry -----------------------------------------------------------------------------

def bad_request_checks(server, cool):
    photometry = cool[0] if cool else ab_photometry(4000.0)
    b, v, r_ = photometry[1], photometry[2], photometry[3]   # johnson-b, johnson-v, cousins-r

    def curve(**changes):
        c = {"id": "lab-filter", "wavelength": [500.0, 510.0, 520.0, 530.0, 540.0], "wavelength_unit": "nm",
             "response": [0.0, 0.6, 1.0, 0.4, 0.0], "detector": "photon_counting"}
        c.update(changes)
        return c

    def limit(band, **changes):
        return dict({"band": band, "value": 5.0, "error": 1.0, "unit": "mJy", "upper_limit": True}, **changes)

    spectrum = harness.planck_spectrum(10)["spectrum"]
    cases = [
        ("unknown band", {"photometry": [b, dict(v, band="johnson-q")]}, 422, "/photometry/1/band", True),
        ("negative response in an inline curve", {"photometry": [b, dict(v, band=curve(response=[0, 0.6, -0.2, 0.4, 0]))]},
         422, "/photometry/1/band/response/2", False),
        ("unsorted inline curve", {"photometry": [b, dict(v, band=curve(wavelength=[500, 510, 530, 520, 540]))]},
         422, "/photometry/1/band/wavelength/3", False),
        ("inline curve with an unknown wavelength unit", {"photometry": [b, dict(v, band=curve(wavelength_unit="furlong"))]},
         422, "/photometry/1/band/wavelength_unit", True),
        ("inline curve with an unknown detector", {"photometry": [b, dict(v, band=curve(detector="eye"))]},
         422, "/photometry/1/band/detector", True),
        ("Vegamag without a zero point for sdss-g (none built in)",
         {"photometry": [b, {"band": "sdss-g", "value": 10.0, "error": 0.02, "unit": "Vegamag"}]},
         422, "/photometry/1/zero_point", False),
        ("ABmag with a zero point", {"photometry": [b, dict(v, zero_point=3631)]}, 422, "/photometry/1/zero_point", False),
        ("zero point in a unit per wavelength",
         {"photometry": [b, dict(v, unit="Vegamag", zero_point={"value": 3.6e-9, "unit": "W/m2/nm"})]},
         422, "/photometry/1/zero_point/unit", True),
        ("photon units", {"photometry": [b, {"band": "johnson-v", "value": 1.0, "error": 0.1, "unit": "photon/s/cm2/Angstrom"}]},
         422, "/photometry/1/unit", False),
        ("upper limit without error", {"photometry": [b, v, {k: x for k, x in limit("sdss-u").items() if k != "error"}]},
         422, "/photometry/2/error", False),
        ("upper limit in magnitudes", {"photometry": [b, v, dict(r_, upper_limit=True)]}, 422, "/photometry/2/upper_limit", False),
        ("only upper limits", {"photometry": [limit("johnson-b"), limit("johnson-v")]}, 422, "/photometry", False),
        ("one band only", {"photometry": [b]}, 422, "/photometry", False),
        ("photometry not an array", {"photometry": {"band": "johnson-b"}}, 422, "/photometry", False),
        ("both spectrum and photometry", {"spectrum": spectrum, "photometry": [b, v]}, 422, "/photometry", False),
        ("options.systematic_error 1 (outside [0, 1))", {"photometry": [b, v], "options": {"systematic_error": 1.0}},
         422, "/options/systematic_error", False),
        ("a band's systematic_error -0.1", {"photometry": [dict(b, systematic_error=-0.1), v]},
         422, "/photometry/0/systematic_error", False),
        ("options.systematic_error with a spectrum", {"spectrum": spectrum, "options": {"systematic_error": 0.02}},
         422, "/options/systematic_error", False),
        ("robust loss with photometry", {"photometry": [b, v], "options": {"loss": {"kind": "huber"}}}, 422, "/options/loss", False),
        ("errors on some detections only", {"photometry": [b, v, {k: x for k, x in r_.items() if k != "error"}]},
         422, "/photometry/2/error", False),
        ("zero error", {"photometry": [b, dict(v, error=0.0)]}, 422, "/photometry/1/error", False),
        ("per-steradian mixed with per-source flux densities",
         {"photometry": [{"band": "johnson-b", "value": 1.0, "error": 0.1, "unit": "mJy"},
                         {"band": "johnson-v", "value": 1.0, "error": 0.1, "unit": "MJy/sr"}]}, 422, "/photometry/1/unit", False),
        ("monochromatic quote without its reference spectrum",
         {"photometry": [b, dict(v, quoted={"kind": "monochromatic", "wavelength": 0.55, "wavelength_unit": "um"})]},
         422, "/photometry/1/quoted/reference", False),
        ("unknown member of a measurement", {"photometry": [dict(b, colour="blue"), v]}, 422, "/photometry/0/colour", True),
        ("value as a string", {"photometry": [b, dict(v, value="9.5")]}, 422, "/photometry/1/value", False),
    ]
    for name, document, status, pointer, accepted in cases:
        check_problem(checks, name, post_json(server, document), status=status, pointer=pointer, accepted=accepted,
                      schema=schema)
    check_problem(checks, "malformed JSON photometry", http("POST", server, FIT, data=b'{"photometry": [', headers=JSON_CT),
                  status=400, schema=schema)

    # Tables: problems with a row carry its line (comment line 1, header line 2, then johnson-u,
    # johnson-b and johnson-v on lines 3, 4 and 5).
    good_rows = table_text(photometry[:3])
    bad_number = good_rows.replace(repr(b["value"]), "bright", 1)
    check_problem(checks, "CSV photometry table with a value that is not a number (line 4)",
                  http("POST", server, FIT, data=bad_number.encode(), headers=CSV_CT), status=400, line=4, schema=schema)
    bad_band = good_rows.replace("johnson-v,", "johnson-q,", 1)
    check_problem(checks, "CSV photometry table with an unknown band (line 5)",
                  http("POST", server, FIT, data=bad_band.encode(), headers=CSV_CT), status=422, line=5,
                  pointer="/photometry/2/band", schema=schema)
    bad_flag = table_text([dict(m, upper_limit=None) for m in photometry[:3]], ("band", "value", "error", "unit", "upper_limit"))
    bad_flag = bad_flag.replace("ABmag,\n", "ABmag,maybe\n", 1)
    check_problem(checks, "CSV photometry table with upper_limit 'maybe' (line 3)",
                  http("POST", server, FIT, data=bad_flag.encode(), headers=CSV_CT), status=400, line=3, schema=schema)
    for parameter, value in (("x_unit", "nm"), ("y_unit", "Jy"), ("loss", "huber")):
        check_problem(checks, f"CSV photometry table with ?{parameter}= (a spectrum parameter)",
                      http("POST", server, FIT + "?" + harness.query([(parameter, value)]), data=good_rows.encode(),
                           headers=CSV_CT), status=422, parameter=parameter, schema=schema)
    check_problem(checks, "CSV photometry table with ?systematic_error=1.5",
                  http("POST", server, FIT + "?systematic_error=1.5", data=good_rows.encode(), headers=CSV_CT),
                  status=422, parameter="systematic_error", schema=schema)
    # Defect fixed with this test (core/api/fit_request.cpp, apply_request_members): a spectrum table
    # took ?systematic_error silently (even 5) and ignored it, where the JSON request is refused.
    spectrum_table = "x,y\n" + "".join(f"{x},{y}\n" for x, y in zip(spectrum["x"], spectrum["y"]))
    check_problem(checks, "CSV spectrum table with ?systematic_error (photometry only)",
                  http("POST", server, FIT + "?x_unit=nm&y_unit=W/m2/nm&systematic_error=0.02", data=spectrum_table.encode(),
                       headers=CSV_CT), status=422, parameter="systematic_error", schema=schema)

    # Defects found by this test and fixed in core/science/photometry.cpp (prepare_photometry).
    doc = json_of(post_json(server, {"photometry": [limit("johnson-b"), {"band": "johnson-v", "value": 1.0, "unit": "mJy"},
                                                     {"band": "cousins-r", "value": 1.2, "unit": "mJy"}]}))
    checks.check("detections without errors beside an upper limit: the pointer names the first detection "
                 "(/photometry/1/error), not the limit", isinstance(doc, dict) and doc.get("pointer") == "/photometry/1/error",
                 f"got {doc.get('pointer') if isinstance(doc, dict) else doc!r}")
    r = post_json(server, {"photometry": [{"band": "johnson-b", "value": 10.5, "error": 0.03, "unit": "ABmag"},
                                          {"band": "johnson-v", "value": 1.3, "error": 0.1, "unit": "MJy/sr"},
                                          {"band": "cousins-r", "value": 1.2, "error": 0.1, "unit": "MJy/sr"}]})
    checks.check("magnitudes (per source) mixed with intensities (MJy/sr) are refused (422 at /photometry/1/unit)",
                 is_response(r) and r.status_code == 422 and json_of(r).get("pointer") == "/photometry/1/unit",
                 describe(r, 160))

    # The server still answers a good request after all of them.
    r = post_json(server, {"photometry": photometry})
    checks.check("a good photometry request is answered 200 after the bad ones", is_response(r) and r.status_code == 200,
                 describe(r, 120))


# ---- the OpenAPI document itself ----------------------------------------------------------------

def document_checks(server):
    if not schema.available:
        checks.skip_schema("the OpenAPI photometry examples", schema.problem)
        return
    examples = schema.doc["components"]["examples"]
    request = examples.get("CoolStarPhotometryRequest", {}).get("value")
    response = examples.get("CoolStarPhotometryResponse", {}).get("value")
    schema.check_component(checks, "the photometry request example matches FitRequest", request, "FitRequest")
    schema.check_component(checks, "the photometry response example matches FitResponse", response, "FitResponse")
    doc = fitted("the photometry request example", post_json(server, request)) if request else None
    if doc is not None and isinstance(response, dict):
        # Real output: the same members, the same temperature (the example was made by the service).
        checks.check("the photometry response example is what the service answers (members; T to 1e-9)",
                     list(doc) == list(response) and rel(temperature_of(doc), temperature_of(response)) <= 1e-9
                     and [b["band"] for b in doc["bands"]] == [b["band"] for b in response["bands"]],
                     f"T {temperature_of(doc)!r} vs {temperature_of(response)!r}")
    table = examples.get("CoolStarPhotometryTable", {}).get("value")
    if isinstance(table, str) and request:
        r = http("POST", server, FIT + "?systematic_error=0.01&distance=14%20pc", data=table.encode(), headers=CSV_CT)
        t_doc = fitted("the photometry table example", r)
        if t_doc is not None and doc is not None:
            checks.check("the table example fits as the request example (T to 1e-12; the error of the distance aside)",
                         rel(temperature_of(t_doc), temperature_of(doc)) <= 1e-12,
                         f"{temperature_of(t_doc)!r} vs {temperature_of(doc)!r}")
    # The schema refuses what the service refuses, where JSON Schema can say it.
    for name, document in (("both spectrum and photometry", {"spectrum": harness.planck_spectrum(5)["spectrum"],
                                                             "photometry": request["photometry"]}),
                           ("neither spectrum nor photometry", {"options": {}}),
                           ("a spectrum with options.systematic_error",
                            {**harness.planck_spectrum(5), "options": {"systematic_error": 0.01}}),
                           ("one band only", {"photometry": request["photometry"][:1]}),
                           ("only upper limits", {"photometry": [dict(m, upper_limit=True) for m in request["photometry"]
                                                                 if m["unit"] == "mJy"]}),
                           ("an upper limit without error", {"photometry": request["photometry"][:2] + [
                               {"band": "wise-w4", "value": 150, "unit": "mJy", "upper_limit": True}]})):
        error = schema.validate(document, schema.component("FitRequest"))
        checks.check(f"the FitRequest schema refuses {name}", error is not None, "accepted" if error is None else "")
    r = http("GET", server, "/openapi.yaml")
    served = r.text if is_response(r) and r.status_code == 200 else ""
    checks.check("GET /openapi.yaml serves the photometry schemas", "BandMeasurement:" in served and "BandResult:" in served,
                 describe(r, 80))


def main():
    server = start_checked_server(checks, schema, args.server)
    if server is None:
        return
    docs = black_body_checks(server)
    cool = docs.get(4000.0)
    table_checks(server, cool)
    inline_checks(server, cool)
    upper_limit_checks(server, cool)
    schema_coverage_checks(server)
    batch_checks(server, cool)
    bad_request_checks(server, cool)
    document_checks(server)
    server.stop(checks)


harness.crash_guard(checks, main)

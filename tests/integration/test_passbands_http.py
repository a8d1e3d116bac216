"""The passband catalogue end to end against the real server: GET /v1/passbands (every shipped band
with its source, detector kind, range, pivot wavelength, effective width, flux convention and Vega
zero point, wavelengths in nm) and GET /v1/passbands/{id} (one band with its published notes and its
curve, wavelengths in um). Both are checked against the curve files of core/data/passbands (the same
ids in the order of INDEX.csv, the same samples) and every answer against openapi/openapi.yaml.

The pivot wavelengths are checked against an independent computation: numpy trapezoid integration of
each curve file, lambda_p^2 = int S lambda / int S / lambda for photon counters and int S / int S /
lambda^2 for bolometers (Tokunaga & Vacca 2005, PASP 117, 421, eq. A11; Bessell & Murphy 2012, PASP
124, 140, eq. A16), to a relative 1e-4 (the service integrates the linear interpolation exactly, the
trapezoid rule does not, so they differ by the rule's error). No literature pivot is asserted: none
could be confirmed here.

Unknown ids answer 404 with a problem document that names the id and lists the known ones; other
methods 405; the metrics count every band under the one route label "/v1/passbands/{id}"; an id of
bytes that are not UTF-8 (%FF) is answered 404 and the server keeps running."""
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
LIST, ONE = "/v1/passbands", "/v1/passbands/{id}"
TEMPLATE_LABEL = "/v1/passbands/{id}"
PIVOT_TOLERANCE = 1e-4      # relative, against numpy trapezoid integration of the curve file
SAMPLE_TOLERANCE = 1e-12    # relative, the served curve against the file's values
CHECKED_BAND = "2mass-j"
EXPECTED_COUNT = 39         # the shipped bands (DESIGN.md: 39 published filter response curves)


# ---- the curve files -------------------------------------------------------------------------

def read_index():
    """INDEX.csv as a list of dicts (band, points, min_um, max_um, detector_kind, published_source)."""
    import csv
    with open(os.path.join(PASSBANDS, "INDEX.csv"), encoding="utf-8", newline="") as f:
        return list(csv.DictReader(f))


def read_curve(band):
    return harness.read_passband_file(args.repo, band)


def trapezoid_pivot_nm(curve):
    """The pivot wavelength by numpy trapezoid integration of the file's samples (nm)."""
    import numpy as np
    trapezoid = getattr(np, "trapezoid", None) or np.trapz  # numpy >= 2 renamed trapz
    lam = np.array(curve["wavelength_um"]) * 1e3
    s = np.array(curve["response"])
    if curve["meta"].get("detector kind", "").startswith("energy"):
        return math.sqrt(trapezoid(s, lam) / trapezoid(s / lam ** 2, lam))
    return math.sqrt(trapezoid(s * lam, lam) / trapezoid(s / lam, lam))


def file_detector(curve):
    return "energy_integrating" if curve["meta"].get("detector kind", "").startswith("energy") else "photon_counting"


def close(a, b, tolerance):
    return isinstance(a, (int, float)) and not isinstance(a, bool) and abs(a - b) <= tolerance * max(abs(b), 1e-300)


# ---- checks ----------------------------------------------------------------------------------

def answer(label, r, path):
    return harness.answer_json(checks, schema, label, r, path, "get")


def list_checks(server, index, curves):
    doc = answer(f"GET {LIST}", http("GET", server, LIST), LIST)
    if doc is None:
        return {}
    entries = doc.get("passbands") if isinstance(doc.get("passbands"), list) else []
    ids = [e.get("id") for e in entries if isinstance(e, dict)]
    index_ids = [row["band"] for row in index]
    checks.check(f"the list has {EXPECTED_COUNT} bands and count says so",
                 len(entries) == EXPECTED_COUNT and doc.get("count") == EXPECTED_COUNT,
                 f"{len(entries)} entries, count {doc.get('count')!r}")
    checks.check("the ids are INDEX.csv's band column, in its order", ids == index_ids,
                 f"served {ids[:5]}..., INDEX.csv {index_ids[:5]}..." if ids != index_ids else "")
    notes = doc.get("notes")
    checks.check("the list's notes mention the detector kinds and values from memory",
                 isinstance(notes, str) and "detector" in notes and "from memory" in notes, repr(notes)[:200])
    by_id = {e["id"]: e for e in entries if isinstance(e, dict) and "id" in e}

    outside, pivot_off, detector_off, range_off, count_off, quoted_off = [], [], [], [], [], []
    worst = (0.0, None)
    for row in index:
        band = row["band"]
        e, curve = by_id.get(band), curves[band]
        if e is None:
            continue
        lo_hi, pivot = e.get("wavelength_range_nm"), e.get("pivot_wavelength_nm")
        if not (isinstance(lo_hi, list) and len(lo_hi) == 2 and isinstance(pivot, (int, float))
                and lo_hi[0] < pivot < lo_hi[1]):
            outside.append(f"{band}: {pivot!r} not in {lo_hi!r}")
        if isinstance(lo_hi, list) and len(lo_hi) == 2:
            # Both ends are samples of the file, and every positive sample lies between them.
            w_nm = [w * 1e3 for w in curve["wavelength_um"]]
            positive = [w for w, r in zip(w_nm, curve["response"]) if r > 0]
            ends_are_samples = all(any(close(end, w, SAMPLE_TOLERANCE) for w in w_nm) for end in lo_hi)
            if not (ends_are_samples and positive and lo_hi[0] <= positive[0] * (1 + SAMPLE_TOLERANCE)
                    and positive[-1] <= lo_hi[1] * (1 + SAMPLE_TOLERANCE)):
                range_off.append(f"{band}: {lo_hi!r}, positive response from {positive[0]} to {positive[-1]} nm"
                                 if positive else f"{band}: no positive sample")
        want = trapezoid_pivot_nm(curve)
        if isinstance(pivot, (int, float)):
            rel = abs(pivot / want - 1)
            if rel > worst[0]:
                worst = (rel, band)
            if rel > PIVOT_TOLERANCE:
                pivot_off.append(f"{band}: served {pivot:.4f}, numpy {want:.4f} nm")
        else:
            pivot_off.append(f"{band}: {pivot!r}")
        if e.get("detector") != file_detector(curve):
            detector_off.append(f"{band}: {e.get('detector')!r} vs file {curve['meta'].get('detector kind')!r}")
        if e.get("samples") != len(curve["wavelength_um"]) or e.get("samples") != int(row["points"]):
            count_off.append(f"{band}: {e.get('samples')!r} vs {len(curve['wavelength_um'])} in the file")
        q = e.get("quoted") or {}
        if q.get("kind") == "monochromatic" and q.get("reference_wavelength_nm") != e.get("reference_wavelength_nm"):
            quoted_off.append(f"{band}: quoted at {q.get('reference_wavelength_nm')!r}, "
                              f"reference {e.get('reference_wavelength_nm')!r}")
    checks.check("every pivot wavelength lies inside its band's wavelength_range_nm", not outside, "; ".join(outside))
    checks.check("every wavelength_range_nm runs between samples of its curve file and covers every positive response",
                 not range_off, "; ".join(range_off))
    checks.check(f"every pivot wavelength agrees to {PIVOT_TOLERANCE:g} with numpy trapezoid integration of its curve "
                 "file (photons: int S lambda / int S / lambda; bolometers: int S / int S / lambda^2)",
                 not pivot_off, "; ".join(pivot_off) or f"worst {worst[0]:.2e} ({worst[1]})")
    checks.check("every detector is the kind its curve file gives", not detector_off, "; ".join(detector_off))
    checks.check("every samples count is the curve file's (and INDEX.csv's points)", not count_off, "; ".join(count_off))
    checks.check("monochromatic flux conventions are quoted at the band's reference wavelength", not quoted_off,
                 "; ".join(quoted_off))

    # The band the brief names, on its own line: the same numpy check.
    e = by_id.get(CHECKED_BAND, {})
    want = trapezoid_pivot_nm(curves[CHECKED_BAND])
    got = e.get("pivot_wavelength_nm")
    checks.check(f"{CHECKED_BAND}: pivot wavelength agrees to {PIVOT_TOLERANCE:g} with numpy trapezoid integration "
                 "of core/data/passbands/2mass-j.csv (photon counter: lambda_p^2 = int S lambda / int S / lambda)",
                 close(got, want, PIVOT_TOLERANCE), f"served {got!r} nm, numpy {want:.4f} nm")
    return by_id


def band_checks(server, by_id, curves):
    """Every band: 200 application/json, valid against the schema, its list entry plus notes and
    curve, the curve file's samples and notes. The band the brief names gets its own lines."""
    one_schema = schema.response_schema(ONE, "get", 200, "application/json")[0] if schema.available else None
    unanswered, invalid, mismatched, curve_off, notes_off = [], [], [], [], []
    for band, curve in curves.items():
        r = http("GET", server, f"/v1/passbands/{band}")
        ok = is_response(r) and r.status_code == 200 and media_type(r) == "application/json"
        doc = json_of(r) if ok else None
        if not isinstance(doc, dict):
            unanswered.append(f"{band}: {describe(r, 100)}")
            continue
        if one_schema is not None:
            error = schema.validate(doc, one_schema)
            if error:
                invalid.append(f"{band}: {error}")
        entry = {k: v for k, v in doc.items() if k not in ("notes", "curve")}
        diff = harness.strict_diff(entry, by_id[band]) if band in by_id else "not in the list"
        if diff is not None:
            mismatched.append(f"{band}: {diff}")
        c = doc.get("curve") if isinstance(doc.get("curve"), dict) else {}
        w, s = c.get("wavelength"), c.get("response")
        n = len(curve["wavelength_um"])
        same_curve = (c.get("wavelength_unit") == "um" and isinstance(w, list) and isinstance(s, list)
                      and len(w) == n and len(s) == n
                      and all(close(a, b, SAMPLE_TOLERANCE) for a, b in zip(w, curve["wavelength_um"]))
                      and all(a == b for a, b in zip(s, curve["response"])))
        if not same_curve:
            curve_off.append(f"{band}: unit {c.get('wavelength_unit')!r}, "
                             f"{len(w) if isinstance(w, list) else w!r} wavelengths, "
                             f"{len(s) if isinstance(s, list) else s!r} responses; the file has {n}")
        if doc.get("notes") != curve["notes"]:
            notes_off.append(f"{band}: {doc.get('notes')!r} vs {curve['notes']!r}")
        if band == CHECKED_BAND:
            label = f"GET /v1/passbands/{band}"
            schema.check(checks, f"{label}: response matches the OpenAPI schema", doc, ONE, "get", 200,
                         "application/json")
            checks.check(f"{label}: the curve has the CSV's {n} samples, wavelengths in um as written there",
                         same_curve, "" if same_curve else curve_off[-1])
            checks.check(f"{label}: notes are the curve file's '# note:' lines", doc.get("notes") == curve["notes"],
                         repr(doc.get("notes"))[:200])
    checks.check(f"GET /v1/passbands/{{id}} answers 200 application/json for all {len(curves)} bands", not unanswered,
                 "; ".join(unanswered))
    if schema.available and one_schema is not None:
        checks.check("every band's document matches the OpenAPI schema", not invalid, "; ".join(invalid))
    else:
        checks.skip_schema("every band's document matches the OpenAPI schema",
                           schema.problem or f"no schema for GET {ONE} 200")
    checks.check("every band's document is its list entry plus notes and curve", not mismatched, "; ".join(mismatched))
    checks.check("every band's curve is its CSV's samples (same count, wavelengths in um, same responses)",
                 not curve_off, "; ".join(curve_off))
    checks.check("every band's notes are its CSV's '# note:' lines", not notes_off, "; ".join(notes_off))


def error_checks(server, index_ids):
    r = http("GET", server, "/v1/passbands/no-such-band")
    doc = check_problem(checks, "GET /v1/passbands/no-such-band", r, status=404)
    if doc is not None:
        detail = doc.get("detail", "")
        checks.check("the 404 detail names the id and lists the known ids",
                     "no-such-band" in detail and all(i in detail for i in index_ids), detail[:200])
        checks.check("the 404 lists the known ids in accepted", doc.get("accepted") == index_ids,
                     repr(doc.get("accepted"))[:200])
        schema.check(checks, "GET /v1/passbands/no-such-band: problem matches the OpenAPI schema", doc, ONE, "get", 404,
                     harness.PROBLEM_TYPE)
    check_problem(checks, "GET /v1/passbands/2MASS-J (ids are lower case)", http("GET", server, "/v1/passbands/2MASS-J"),
                  status=404)
    for path in ("/v1/passbands/", "/v1/passbands/2mass-j/curve"):
        doc = check_problem(checks, f"GET {path} (no such path)", http("GET", server, path), status=404)
        if doc is not None:
            schema.check(checks, f"GET {path}: problem matches the OpenAPI schema", doc, path, "get", 404,
                         harness.PROBLEM_TYPE, fallback="Problem")
    for path, template in ((LIST, LIST), ("/v1/passbands/2mass-j", ONE)):
        r = http("POST", server, path, data=b"{}", headers={"Content-Type": "application/json"})
        doc = check_problem(checks, f"POST {path}", r, status=405)
        if is_response(r):
            checks.check(f"POST {path}: Allow is GET", r.headers.get("Allow") == "GET", repr(r.headers.get("Allow")))
        if doc is not None:
            schema.check(checks, f"POST {path}: problem matches the OpenAPI schema", doc, template, "get", 405,
                         harness.PROBLEM_TYPE)
    # Defect fixed with this endpoint: a path of bytes that are not UTF-8 made the problem document
    # and the access-log line throw, a 500 and then the end of the process.
    for path in ("/v1/passbands/%FF", "/v1/nothing%FF"):
        check_problem(checks, f"GET {path} (not UTF-8)", http("GET", server, path), status=404)
    r = http("GET", server, "/v1/health")
    checks.check("the server still answers after ids that are not UTF-8", is_response(r) and r.status_code == 200,
                 describe(r, 100))


def metrics_checks(server, n_bands):
    parsed, r = harness.fetch_metrics(server)
    if parsed is None:
        checks.check("GET /metrics", False, describe(r))
        return
    samples, _, errors = parsed
    checks.check("/metrics parses as Prometheus text 0.0.4", not errors, "; ".join(errors[:3]))
    total = "planckton_http_requests_total"
    ok_count = harness.metric_value(samples, total, route=TEMPLATE_LABEL, status="200")
    checks.check(f"every band is counted under route=\"{TEMPLATE_LABEL}\" (200: {n_bands})", ok_count == n_bands,
                 f"got {ok_count}")
    not_found = harness.metric_value(samples, total, route=TEMPLATE_LABEL, status="404")
    checks.check(f"unknown ids are counted under route=\"{TEMPLATE_LABEL}\", status 404", not_found >= 2,
                 f"got {not_found}")
    checks.check("GET /v1/passbands is counted under its own route",
                 harness.metric_value(samples, total, route=LIST, status="200") >= 1, "")
    per_id = sorted({l.get("route") for _, l, _ in samples
                     if l.get("route", "").startswith("/v1/passbands/") and l.get("route") != TEMPLATE_LABEL})
    checks.check("no route label names a single band", not per_id, repr(per_id))


def main():
    index = read_index()
    curves = {row["band"]: read_curve(row["band"]) for row in index}
    server = start_checked_server(checks, schema, args.server)
    if server is None:
        return
    by_id = list_checks(server, index, curves)
    band_checks(server, by_id, curves)
    error_checks(server, [row["band"] for row in index])
    metrics_checks(server, len(curves))
    harness.check_served_paths(checks, server, "get", (LIST, ONE))
    server.stop(checks)


harness.crash_guard(checks, main)

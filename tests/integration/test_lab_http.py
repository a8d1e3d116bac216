"""The laboratory endpoints end to end against the real server: POST /v1/light (colorimetry of a lamp
or an LED from its spectral power distribution) and POST /v1/hot-body (grey-body temperature and
emissivity, radiance and ratio temperatures of a furnace seen through a window). The three lab
samples of sample-spectra/ are posted and checked against the truth make_samples.py computed for them
("lab_samples" of truth.json: CCT and Duv by its own 5 nm summation with the CIE 1931 2-degree
colour-matching functions and a brute-force nearest-point search of the Planckian locus; the
furnace's true temperature and emissivity); the CLI (`planckton light FILE`, `planckton hot-body
FILE`) gives the same document as HTTP; bad input is answered with problem documents naming the
value at fault; every answer is validated against openapi/openapi.yaml."""
import json
import math
import os
import tempfile

import sys

sys.dont_write_bytecode = True  # no __pycache__ in the source tree
import harness  # noqa: E402
from harness import Checks, OpenAPI, Server, start_checked_server, check_problem, describe, http, is_response, json_of, media_type

args = harness.parse_args(__doc__)
checks = Checks(args.require_schema)
schema = OpenAPI(args.repo)
SAMPLES = os.path.join(args.repo, "sample-spectra")
JSON_CT = {"Content-Type": "application/json"}
LIGHT, HOT = "/v1/light", "/v1/hot-body"
CLI_COMMAND = {LIGHT: "light", HOT: "hot-body"}
REQUEST_SCHEMA = {LIGHT: "LightRequest", HOT: "HotBodyRequest"}

# Tolerances against the truth (the brief of the lab samples): the CCT within 30 K and Duv within
# 1e-3 of the independent calculation; the chromaticity coordinates to 5e-4 (the same summation on
# the same 5 nm table, so only the interpolation may differ); the ratio temperature within 2 %.
CCT_TOLERANCE_K = 30.0
DUV_TOLERANCE = 1e-3
CHROMATICITY_TOLERANCE = 5e-4
RATIO_TOLERANCE = 0.02
CAUTION_WORDS = ("not a certified calibration", "hazard")
REPEATED_POINTERS = ["/spectrum/x/1", "/spectrum/x/2"]  # the repeated wavelength, in the request's own order


def load(name):
    with open(os.path.join(SAMPLES, name), "rb") as f:
        return f.read()


def answer(label, r, path):
    return harness.answer_json(checks, schema, label, r, path, "post")


def same(label, a, b):
    diff = harness.strict_diff(a, b)
    checks.check(label, a is not None and b is not None and diff is None,
                 "one side missing" if a is None or b is None else (diff or ""))


def near(label, got, want, tolerance, relative=False):
    try:
        bound = tolerance * abs(want) if relative else tolerance
        ok = abs(float(got) - want) <= bound
        detail = f"got {got!r}, truth {want!r}, tolerance {bound:.3g}"
    except (TypeError, ValueError) as e:
        ok, detail = False, f"got {got!r} ({type(e).__name__})"
    return checks.check(label, ok, detail)


def dig(doc, *keys):
    """doc[k0][k1]... or None when a member is missing."""
    node = doc
    for k in keys:
        if isinstance(node, dict) and k in node:
            node = node[k]
        elif isinstance(node, list) and isinstance(k, int) and -len(node) <= k < len(node):
            node = node[k]
        else:
            return None
    return node


def check_cautions(label, doc):
    cautions = dig(doc, "cautions")
    text = " ".join(c for c in cautions if isinstance(c, str)).lower() if isinstance(cautions, list) else ""
    missing = [w for w in CAUTION_WORDS if w not in text]
    checks.check(f"{label}: cautions say it is not a certified calibration and name the hazards", not missing,
                 f"missing {missing}: {cautions!r}"[:300] if missing else "")


def check_cct_consistent(label, doc):
    """A CCT is given with |Duv| <= 0.05 and withheld (null, with a reason) beyond (CIE 015:2018)."""
    cct, duv = dig(doc, "cct"), dig(doc, "duv", "value")
    if not isinstance(cct, dict) or not isinstance(duv, (int, float)):
        checks.check(f"{label}: cct and duv present", False, json.dumps({"cct": cct, "duv": dig(doc, "duv")})[:300])
        return
    if abs(duv) > 0.05:
        ok = cct.get("value") is None and cct.get("withheld") is True and isinstance(cct.get("reason"), str)
        what = "withheld (value null, a reason) since |Duv| > 0.05"
    else:
        ok = isinstance(cct.get("value"), (int, float)) and cct.get("withheld") is False and cct.get("reason") is None
        what = "given (withheld false, reason null) since |Duv| <= 0.05"
    checks.check(f"{label}: CCT {what}", ok, f"Duv {duv:+.5f}, cct {json.dumps(cct)[:200]}")


def check_light(label, doc, truth, observer="CIE 1931 2-degree"):
    col = truth["colorimetry"]
    checks.check(f"{label}: observer {observer!r}", doc.get("observer") == observer, repr(doc.get("observer")))
    checks.check(f"{label}: range_nm [380, 780]", doc.get("range_nm") == [380, 780], repr(doc.get("range_nm")))
    near(f"{label}: tristimulus Y = 100", dig(doc, "tristimulus", "Y"), 100.0, 1e-9, relative=True)
    for member, keys in (("x", ("chromaticity", "x")), ("y", ("chromaticity", "y")),
                         ("u", ("uv_1960", "u")), ("v", ("uv_1960", "v")),
                         ("u_prime", ("uv_1976", "u_prime")), ("v_prime", ("uv_1976", "v_prime"))):
        near(f"{label}: {'/'.join(keys)} within {CHROMATICITY_TOLERANCE} of the truth", dig(doc, *keys), col[member],
             CHROMATICITY_TOLERANCE)
    check_cct_consistent(label, doc)
    if not col["cct_withheld"]:
        near(f"{label}: CCT within {CCT_TOLERANCE_K:.0f} K of the truth ({col['cct_K']:.1f} K)",
             dig(doc, "cct", "value"), col["cct_K"], CCT_TOLERANCE_K)
    near(f"{label}: Duv within {DUV_TOLERANCE} of the truth ({col['duv']:+.5f})", dig(doc, "duv", "value"),
         col["duv"], DUV_TOLERANCE)
    checks.check(f"{label}: cct.unit K", dig(doc, "cct", "unit") == "K", repr(dig(doc, "cct", "unit")))
    dt = dig(doc, "distribution_temperature")
    if "distribution_temperature_K" in truth:
        near(f"{label}: distribution temperature within 1 % of an independent least-squares fit "
             f"({truth['distribution_temperature_K']:.1f} K)", dig(dt, "value"), truth["distribution_temperature_K"],
             0.01, relative=True)
    checks.check(f"{label}: distribution_temperature over 380-780 nm, unit K",
                 isinstance(dt, dict) and dt.get("range_nm") == [380, 780] and dt.get("unit") == "K",
                 json.dumps(dt)[:300])
    check_cautions(label, doc)


def check_hot_body(label, doc, truth):
    t_true, e_true = truth["temperature_K"], truth["emissivity"]["value"]
    checks.check(f"{label}: model grey_body (constant emissivity)", doc.get("model") == "grey_body",
                 repr(doc.get("model")))
    for name, want in (("temperature", t_true), ("emissivity", e_true)):
        est = dig(doc, "parameters", name)
        lo_hi = dig(est, "interval_95")
        ok = isinstance(lo_hi, list) and len(lo_hi) == 2 and lo_hi[0] <= want <= lo_hi[1]
        checks.check(f"{label}: true {name} {want} within the 95 % interval", ok,
                     f"fit {dig(est, 'value')!r}, interval {lo_hi!r}")
    checks.check(f"{label}: no emissivity_slope for the constant form",
                 isinstance(dig(doc, "parameters"), dict) and "emissivity_slope" not in doc["parameters"],
                 list(dig(doc, "parameters") or {}))
    checks.check(f"{label}: temperature in K, emissivity unit '1'",
                 dig(doc, "parameters", "temperature", "unit") == "K"
                 and dig(doc, "parameters", "emissivity", "unit") == "1",
                 f"{dig(doc, 'parameters', 'temperature', 'unit')!r}, {dig(doc, 'parameters', 'emissivity', 'unit')!r}")
    ref = dig(doc, "reference_wavelength")
    checks.check(f"{label}: reference wavelength the middle of the band (1750 nm)",
                 isinstance(ref, dict) and ref.get("unit") == "nm" and isinstance(ref.get("value"), (int, float))
                 and abs(ref["value"] - 1750.0) < 1e-6, repr(ref))

    rts = dig(doc, "radiance_temperatures")
    wanted = [r["wavelength_nm"] for r in truth["radiance_temperatures"]]
    got = [dig(r, "wavelength") for r in rts] if isinstance(rts, list) else None
    checks.check(f"{label}: radiance temperatures at {wanted} nm, in the order asked",
                 isinstance(got, list) and len(got) == len(wanted)
                 and all(isinstance(g, (int, float)) and abs(g - w) <= 1e-9 * w for g, w in zip(got, wanted)), repr(got))
    checks.check(f"{label}: the wavelengths asked are echoed exactly (nm in, nm out)", got == wanted, repr(got))
    if isinstance(rts, list):
        for r, t in zip(rts, truth["radiance_temperatures"]):
            value = dig(r, "value")
            checks.check(f"{label}: radiance temperature at {t['wavelength_nm']} nm below the true temperature "
                         f"(grey body)", isinstance(value, (int, float)) and value < t_true, f"{value!r} vs {t_true}")
            near(f"{label}: radiance temperature at {t['wavelength_nm']} nm within 1 % of the truth "
                 f"({t['value_K']:.1f} K)", value, t["value_K"], 0.01, relative=True)
    ratio = dig(doc, "ratio_temperature")
    near(f"{label}: ratio temperature ({truth['ratio_temperature']['pair_nm']} nm) within 2 % of the truth "
         f"({truth['ratio_temperature']['value_K']:.1f} K)", dig(ratio, "value"),
         truth["ratio_temperature"]["value_K"], RATIO_TOLERANCE, relative=True)
    check_cautions(label, doc)


def samples(server):
    truth = harness.load_truth(args.repo)
    lab = {e["name"]: e for e in truth.get("lab_samples", [])}
    checks.check("truth.json has the three lab samples",
                 sorted(lab) == ["cinder-lamp-ql7", "cinder-led-w2", "kiln-window-k4"], sorted(lab))
    docs = {}
    for name, sample in lab.items():
        path = sample["endpoint"]
        body = load(sample["json"])
        schema.check_component(checks, f"{name}: the sample request matches {REQUEST_SCHEMA[path]}",
                               json.loads(body), REQUEST_SCHEMA[path])
        doc = answer(f"{name} over HTTP ({path})", http("POST", server, path, data=body, headers=JSON_CT), path)
        if doc is not None:
            docs[name] = doc
            if path == LIGHT:
                check_light(name, doc, sample)
            else:
                check_hot_body(name, doc, sample)
        code, cli_doc, err = harness.run_cli(args.cli, [CLI_COMMAND[path], os.path.join(SAMPLES, sample["json"])])
        checks.check(f"{name} through the CLI ({CLI_COMMAND[path]}): exit 0", code == 0 and cli_doc is not None,
                     f"exit {code}: {err.strip()[:200]}")
        same(f"{name}: CLI and HTTP give the same document", cli_doc, doc)

    # The LED with the 10-degree observer: named, valid, and a different chromaticity.
    led = lab.get("cinder-led-w2")
    if led:
        request = json.loads(load(led["json"]))
        request["observer"] = "cie1964_10deg"
        doc = answer("cinder-led-w2 with observer cie1964_10deg", http(
            "POST", server, LIGHT, data=harness.compact(request), headers=JSON_CT), LIGHT)
        if doc is not None:
            checks.check("cinder-led-w2 with observer cie1964_10deg: observer 'CIE 1964 10-degree'",
                         doc.get("observer") == "CIE 1964 10-degree", repr(doc.get("observer")))
            x10, x2 = dig(doc, "chromaticity", "x"), dig(docs.get("cinder-led-w2"), "chromaticity", "x")
            checks.check("cinder-led-w2: the 10-degree chromaticity differs from the 2-degree one",
                         isinstance(x10, float) and isinstance(x2, float) and abs(x10 - x2) > 1e-4, f"{x10!r} vs {x2!r}")
            check_cct_consistent("cinder-led-w2 with observer cie1964_10deg", doc)
        # The default observer spelled out gives the same document.
        request["observer"] = "cie1931_2deg"
        doc = json_of(http("POST", server, LIGHT, data=harness.compact(request), headers=JSON_CT))
        same("cinder-led-w2: observer cie1931_2deg spelled out gives the default's document", doc,
             docs.get("cinder-led-w2"))

        # The LED's blue chip alone: far below the locus, so the CCT must be withheld.
        blue = json.loads(load(led["json"]))
        xs = blue["spectrum"]["x"]
        blue["spectrum"]["y"] = [math.exp(-0.5 * ((x - 450.0) / 10.5) ** 2) + 1e-4 for x in xs]
        doc = answer("blue chip alone (far from the locus)", http(
            "POST", server, LIGHT, data=harness.compact(blue), headers=JSON_CT), LIGHT)
        if doc is not None:
            duv = dig(doc, "duv", "value")
            checks.check("blue chip alone: |Duv| > 0.05", isinstance(duv, (int, float)) and abs(duv) > 0.05, repr(duv))
            check_cct_consistent("blue chip alone", doc)

    # The lamp's points in decreasing wavelength: the same colour.
    lamp = lab.get("cinder-lamp-ql7")
    if lamp and "cinder-lamp-ql7" in docs:
        request = json.loads(load(lamp["json"]))
        for k in ("x", "y"):
            request["spectrum"][k] = request["spectrum"][k][::-1]
        doc = answer("cinder-lamp-ql7 in decreasing wavelength", http(
            "POST", server, LIGHT, data=harness.compact(request), headers=JSON_CT), LIGHT)
        if doc is not None:
            ref = docs["cinder-lamp-ql7"]
            pairs = [(dig(doc, *k), dig(ref, *k)) for k in (("chromaticity", "x"), ("chromaticity", "y"),
                                                             ("cct", "value"), ("duv", "value"))]
            checks.check("cinder-lamp-ql7 in decreasing wavelength: the same xy, CCT and Duv",
                         all(isinstance(a, float) and isinstance(b, float) and abs(a - b) <= 1e-9 * max(1.0, abs(b))
                             for a, b in pairs), repr(pairs))

    # The furnace with a linear emissivity: the true one is constant, so the slope's interval holds 0.
    kiln = lab.get("kiln-window-k4")
    if kiln:
        request = json.loads(load(kiln["json"]))
        request["emissivity"] = "linear"
        label = "kiln-window-k4 with a linear emissivity"
        doc = answer(label, http("POST", server, HOT, data=harness.compact(request), headers=JSON_CT), HOT)
        if doc is not None:
            checks.check(f"{label}: model grey_body_linear", doc.get("model") == "grey_body_linear", repr(doc.get("model")))
            for name, want in (("temperature", kiln["temperature_K"]), ("emissivity", kiln["emissivity"]["value"]),
                               ("emissivity_slope", 0.0)):
                lo_hi = dig(doc, "parameters", name, "interval_95")
                ok = isinstance(lo_hi, list) and len(lo_hi) == 2 and lo_hi[0] <= want <= lo_hi[1]
                checks.check(f"{label}: true {name} {want} within the 95 % interval", ok,
                             f"fit {dig(doc, 'parameters', name, 'value')!r}, interval {lo_hi!r}")
    return lab


def bad_input(server, lab):
    lamp = json.loads(load(lab["cinder-lamp-ql7"]["json"])) if "cinder-lamp-ql7" in lab else None
    kiln = json.loads(load(lab["kiln-window-k4"]["json"])) if "kiln-window-k4" in lab else None
    if lamp is None or kiln is None:
        checks.check("bad input: the lab samples exist", False)
        return
    good = {LIGHT: harness.compact(lamp), HOT: harness.compact(kiln)}

    def edited(base, edit):
        doc = json.loads(json.dumps(base))
        edit(doc)
        return doc

    def narrow(doc):  # keep 400-700 nm only: the SPD no longer covers 380-780 nm
        sp = doc["spectrum"]
        keep = [i for i, x in enumerate(sp["x"]) if 400 <= x <= 700]
        for k in ("x", "y"):
            sp[k] = [sp[k][i] for i in keep]

    def flux(doc):
        doc["spectrum"]["y_unit"] = "W/m2/nm"

    def relative(doc):
        doc["spectrum"]["y_unit"] = "relative/nm"

    def set_member(key, value):
        return lambda doc: doc.__setitem__(key, value)

    def set_member_of(parent, key, value):
        return lambda doc: doc[parent].__setitem__(key, value)

    def repeated_x(doc):  # points in decreasing wavelength, the second point's wavelength repeated at the third
        sp = doc["spectrum"]
        sp["x"], sp["y"] = sp["x"][::-1], sp["y"][::-1]
        sp["x"][2] = sp["x"][1]

    cases = [
        # (name, path, request document or raw bytes, expectations)
        ("light: SPD covering only 400-700 nm", LIGHT, edited(lamp, narrow),
         {"status": 422, "pointer_prefix": "/spectrum"}),
        ("light: unknown observer", LIGHT, edited(lamp, set_member("observer", "cie2006_2deg")),
         {"status": 422, "pointer": "/observer"}),
        ("light: observer not a string", LIGHT, edited(lamp, set_member("observer", 2)),
         {"status": 422, "pointer": "/observer"}),
        ("light: unknown member", LIGHT, edited(lamp, set_member("emissivity", "constant")),
         {"status": 422, "pointer": "/emissivity"}),
        ("light: no spectrum", LIGHT, {"observer": "cie1931_2deg"}, {"status": 422, "pointer": "/spectrum"}),
        ("light: photon counts (not energy)", LIGHT, edited(lamp, set_member_of("spectrum", "y_unit", "photon/s/cm2/Angstrom")),
         {"status": 422, "pointer": "/spectrum/y_unit"}),
        ("light: a repeated wavelength (points in decreasing order)", LIGHT, edited(lamp, repeated_x),
         {"status": 422, "pointer_prefix": "/spectrum/x", "pointer_in": REPEATED_POINTERS}),
        ("light: malformed JSON", LIGHT, b'{"spectrum": [', {"status": 400}),
        ("hot-body: flux density (not per steradian)", HOT, edited(kiln, flux),
         {"status": 422, "pointer": "/spectrum/y_unit"}),
        ("hot-body: relative spectrum (not per steradian)", HOT, edited(kiln, relative),
         {"status": 422, "pointer": "/spectrum/y_unit"}),
        ("hot-body: unknown emissivity form", HOT, edited(kiln, set_member("emissivity", "quadratic")),
         {"status": 422, "pointer": "/emissivity"}),
        ("hot-body: ratio_pair of three wavelengths", HOT, edited(kiln, set_member("ratio_pair", [1100, 1700, 2300])),
         {"status": 422, "pointer_prefix": "/ratio_pair"}),
        ("hot-body: ratio_pair of one wavelength twice", HOT, edited(kiln, set_member("ratio_pair", [1500, 1500])),
         {"status": 422, "pointer_prefix": "/ratio_pair"}),
        ("hot-body: radiance_temperature_at not a list", HOT, edited(kiln, set_member("radiance_temperature_at", 1200)),
         {"status": 422, "pointer_prefix": "/radiance_temperature_at"}),
        ("hot-body: radiance temperature asked outside the data", HOT,
         edited(kiln, set_member("radiance_temperature_at", [1200, 3000])),
         {"status": 422, "pointer": "/radiance_temperature_at/1"}),
        ("hot-body: unknown member", HOT, edited(kiln, set_member("observer", "cie1931_2deg")),
         {"status": 422, "pointer": "/observer"}),
        ("hot-body: malformed JSON", HOT, b'{"spectrum": [', {"status": 400}),
    ]
    for name, path, request, expect in cases:
        body = request if isinstance(request, bytes) else harness.compact(request).encode()
        r = http("POST", server, path, data=body, headers=JSON_CT)
        problem = check_problem(checks, name, r, status=expect.get("status"), pointer=expect.get("pointer"),
                                pointer_prefix=expect.get("pointer_prefix"))
        if problem is not None and "pointer_in" in expect:
            checks.check(f"{name}: pointer names a point of the request ({' or '.join(expect['pointer_in'])})",
                         problem.get("pointer") in expect["pointer_in"], f"got {problem.get('pointer')!r}")
        if problem is not None:
            schema.check(checks, f"{name}: problem matches the OpenAPI schema", problem, path, "post", r.status_code,
                         harness.PROBLEM_TYPE)
        after = http("POST", server, path, data=good[path], headers=JSON_CT)
        checks.check(f"{name}: a good request right after is answered 200", is_response(after)
                     and after.status_code == 200, "" if is_response(after) and after.status_code == 200 else describe(after))

    # Media type and method, as for the other POST endpoints.
    for path in (LIGHT, HOT):
        r = http("POST", server, path, data=good[path], headers={"Content-Type": "text/csv"})
        problem = check_problem(checks, f"{path} with Content-Type text/csv", r, status=415)
        if problem is not None:
            schema.check(checks, f"{path} with Content-Type text/csv: problem matches the OpenAPI schema", problem,
                         path, "post", 415, harness.PROBLEM_TYPE)
        r = http("GET", server, path)
        problem = check_problem(checks, f"GET {path}", r, status=405)
        if is_response(r):
            checks.check(f"GET {path}: Allow names POST", "POST" in r.headers.get("Allow", ""),
                         repr(r.headers.get("Allow")))
        if problem is not None:
            schema.check(checks, f"GET {path}: problem matches the OpenAPI schema", problem, path, "post", 405,
                         harness.PROBLEM_TYPE)

    # The CLI: bad input exits 2 and names the field on standard error.
    with tempfile.TemporaryDirectory(prefix="planckton-lab-") as tmp:
        for command, request, field in (("hot-body", edited(kiln, flux), "/spectrum/y_unit"),
                                        ("light", edited(lamp, set_member("observer", "cie2006_2deg")), "/observer")):
            path = os.path.join(tmp, f"bad-{command}.json")
            with open(path, "w", encoding="utf-8") as f:
                f.write(harness.compact(request))
            code, out, err = harness.run_cli(args.cli, [command, path])
            checks.check(f"CLI {command} with bad input: exit 2, {field} named on stderr, nothing on stdout",
                         code == 2 and field in err and out is None, f"exit {code}, stderr {err.strip()[:200]!r}")


def main():
    server = start_checked_server(checks, schema, args.server)
    if server is None:
        return
    lab = samples(server)
    bad_input(server, lab)
    harness.check_served_paths(checks, server, "post", (LIGHT, HOT))
    server.stop(checks)


harness.crash_guard(checks, main)

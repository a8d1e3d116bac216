"""The model family on POST /v1/fit end to end against the real server: the five model samples of
sample-spectra (model_samples of truth.json: a reddened star, a dust clump with its dust mass, an
unresolved binary, a diluted photosphere, a redshifted flare) as JSON requests, the same documents
from the CLI, the truth within 3 sigma of every fitted parameter, the members each model adds
(extinction, derived.dust_mass, components, frames); GET /v1/models; bad model inputs answered 422 at
the pointer of the offending value; the table query parameters (model, opacity, redshift,
extinction, r_v, fix); the CSV and SVG representations of a model fit; a batch of model requests.
Every JSON answer is validated against openapi/openapi.yaml (JSON Schema Draft 2020-12).

Outside sources, named again beside each check:
- The truth: sample-spectra/make_samples.py generates each sample from its own physics (the
  redshifted flare from L_nu and a luminosity distance, the clump from a dust mass and opacity,
  CCM89 written out in Python and compared there with python3-extinction's ccm89) with seeded noise;
  its --check fits them again with scipy.optimize.least_squares.
- The peak of optically thin dust, F_nu ~ nu^(3 + beta) / (e^x - 1) with x = h nu / k T: the root of
  (3 + beta)(1 - e^-x) = x (and of (5 + beta)(1 - e^-x) = x for F_lambda), found here with
  scipy.optimize.brentq (scipy 1.10, Debian python3-scipy), with the CODATA 2018 exact h, c, k.
All requests go to the test server on 127.0.0.1."""
import copy
import json
import math
import os
import xml.etree.ElementTree as ET

import sys

sys.dont_write_bytecode = True  # no __pycache__ in the source tree
import harness  # noqa: E402
from harness import Checks, OpenAPI, start_checked_server, check_problem, describe, http, is_response, json_of, media_type

args = harness.parse_args(__doc__)
checks = Checks(args.require_schema)
schema = OpenAPI(args.repo)
SAMPLES = os.path.join(args.repo, "sample-spectra")
FIT, BATCH = "/v1/fit", "/v1/fit/batch"
JSON_CT = {"Content-Type": "application/json"}
CSV_CT = {"Content-Type": "text/csv"}
NDJSON_CT = {"Content-Type": "application/x-ndjson"}
KINDS = ["planck", "diluted_planck", "modified_black_body", "two_temperature"]
SIGMAS = 3.0
LINEAR = {"beta", "color_excess"}   # the parameters fitted as they are (GET /v1/models: fitted_as)

# CODATA 2018 exact SI values (h, c, k).
H, C, K = 6.62607015e-34, 299792458.0, 1.380649e-23


def rel(a, b):
    return abs(a / b - 1.0) if isinstance(a, (int, float)) and isinstance(b, (int, float)) and b else math.inf


def fitted(label, r):
    """200 application/json, valid against the FitResponse schema; returns the document or None."""
    return harness.answer_json(checks, schema, label, r, FIT, "post")


def post_json(server, document, headers=None):
    return http("POST", server, FIT, data=harness.compact(document), headers=dict(JSON_CT, **(headers or {})))


def load(name):
    with open(os.path.join(SAMPLES, name), encoding="utf-8") as f:
        return json.load(f)


def within(truth, p):
    """(ok, z): the truth within SIGMAS sigma of the fitted parameter; relative (in ln) for the positive
    parameters, whose intervals are Gaussian in the logarithm, absolute for beta and color_excess."""
    value, error = p["value"], p["error"]
    if not isinstance(error, (int, float)) or error <= 0:
        return False, math.nan
    z = (truth - value) / error if p.get("_linear") else math.log(truth / value) / (error / value)
    return abs(z) <= SIGMAS, z


def truth_checks(label, sample, doc):
    for name, truth in sample["parameters"].items():
        p = doc["parameters"].get(name)
        if p is None:
            checks.check(f"{label}: parameter {name} reported", False, list(doc["parameters"]))
            continue
        ok, z = within(truth, dict(p, _linear=name in LINEAR))
        checks.check(f"{label}: true {name} {truth:.6g} {p['unit']} within {SIGMAS:.0f} sigma (make_samples.py truth)",
                     ok, f"fit {p['value']:.6g} +- {p['error']:.3g} {p['unit']}, {z:+.2f} sigma")
    checks.check(f"{label}: status converged", doc.get("status") == "converged", doc.get("status"))


# ---- GET /v1/models ---------------------------------------------------------------------------------

def models_endpoint(server):
    r = http("GET", server, "/v1/models")
    doc = harness.answer_json(checks, schema, "GET /v1/models", r, "/v1/models", "get")
    if doc is None:
        return None
    kinds = [m.get("kind") for m in doc.get("models", [])]
    checks.check("GET /v1/models lists the four kinds", kinds == KINDS, repr(kinds))
    laws = [l.get("law") for l in doc.get("modifiers", {}).get("extinction", {}).get("laws", [])]
    checks.check("GET /v1/models lists the four extinction laws with their ranges",
                 laws == ["cardelli1989", "odonnell1994", "fitzpatrick1999", "calzetti2000"], repr(laws))
    return doc


# ---- the samples ---------------------------------------------------------------------------------------

def extinction_members(label, sample, doc, catalogue):
    e = doc.get("extinction") or {}
    law = sample["model"]["extinction"]["law"]
    ranges = {l["law"]: l["range_um"] for l in (catalogue or {}).get("modifiers", {}).get("extinction", {}).get("laws", [])}
    checks.check(f"{label}: extinction member names {law}, R_V {sample['extinction']['r_v']} (the default), the "
                 "observed frame and the law's range as GET /v1/models lists it",
                 e.get("law") == law and e.get("r_v") == sample["extinction"]["r_v"] and e.get("frame") == "observed"
                 and (not ranges or e.get("range_um") == ranges.get(law)), repr(e)[:300])


def dust_members(label, sample, doc):
    m = doc.get("derived", {}).get("dust_mass")
    if not isinstance(m, dict):
        checks.check(f"{label}: derived.dust_mass with options.distance and model.dust_opacity", False,
                     repr(list(doc.get("derived", {}))))
        return
    ok, z = within(sample["dust_mass_kg"], m)
    checks.check(f"{label}: true dust mass {sample['dust_mass_kg']:.4e} kg within {SIGMAS:.0f} sigma "
                 "(make_samples.py: S = M kappa / (d^2 (nu_k / nu_0)^beta))", ok and m.get("unit") == "kg",
                 f"fit {m['value']:.4e} +- {m['error']:.2e} {m.get('unit')}, {z:+.2f} sigma")
    checks.check(f"{label}: dust_mass.solar_masses is the value over the nominal solar mass (IAU 2015 B3 / CODATA G)",
                 rel(m.get("solar_masses"), m["value"] / sample["solar_mass_kg"]) < 1e-9,
                 f"{m.get('solar_masses')!r}, {m['value'] / sample['solar_mass_kg']!r}")
    beta = doc["parameters"].get("beta", {})
    checks.check(f"{label}: beta is free, bounded [0, 5] by default", beta.get("fixed") is False
                 and beta.get("bounds") == [0.0, 5.0], repr({k: beta.get(k) for k in ("fixed", "bounds")}))


def component_members(label, sample, doc):
    components = doc.get("components") or []
    labels = [c.get("component") for c in components]
    checks.check(f"{label}: components labelled cooler, warmer", labels == ["cooler", "warmer"], repr(labels))
    if labels != ["cooler", "warmer"]:
        return
    same_t = all(c["temperature"]["value"] == doc["parameters"][f"temperature_{i + 1}"]["value"]
                 for i, c in enumerate(components))
    checks.check(f"{label}: each component's temperature is temperature_1 / temperature_2, T_1 < T_2",
                 same_t and components[0]["temperature"]["value"] < components[1]["temperature"]["value"],
                 repr([c["temperature"]["value"] for c in components]))
    shares = [c.get("share_of_bolometric_flux") for c in components]
    checks.check(f"{label}: the components' shares of the bolometric flux add up to 1",
                 all(isinstance(s, float) for s in shares) and abs(sum(shares) - 1.0) < 1e-9, repr(shares))


def frame_members(label, sample, doc):
    frames = doc.get("frames")
    if not isinstance(frames, dict):
        checks.check(f"{label}: frames member with a redshift", False, repr(list(doc)))
        return
    z = sample["redshift"]
    t = doc["parameters"]["temperature"]
    rest = frames.get("rest", {}).get("temperatures", {}).get("temperature", {})
    observed = frames.get("observed", {}).get("temperatures", {}).get("temperature", {})
    checks.check(f"{label}: frames.redshift is {z}, frames.rest.temperatures the fitted (rest-frame) temperature",
                 frames.get("redshift") == z and rest.get("value") == t["value"], repr(frames.get("redshift")))
    checks.check(f"{label}: frames.observed temperature is T / (1 + z) (1e-12)",
                 rel(observed.get("value"), t["value"] / (1.0 + z)) < 1e-12, f"{observed.get('value')!r}")
    ok, zs = within(sample["observed_temperature_K"], observed)
    checks.check(f"{label}: true observed temperature {sample['observed_temperature_K']:.1f} K within {SIGMAS:.0f} sigma",
                 ok, f"{observed.get('value')!r} +- {observed.get('error')!r}, {zs:+.2f} sigma")
    rest_peak = frames.get("rest", {}).get("peaks", {}).get("frequency", {}).get("value")
    observed_peak = doc.get("peaks", {}).get("frequency", {}).get("value")
    checks.check(f"{label}: the rest-frame peak frequency is (1 + z) times the observed one (1e-9)",
                 rel(rest_peak, (1.0 + z) * observed_peak) < 1e-9 if observed_peak else False,
                 f"rest {rest_peak!r}, observed {observed_peak!r}")
    r = doc.get("derived", {}).get("radius")
    if isinstance(r, dict):
        ok, zs = within(sample["radius_m"], r)
        checks.check(f"{label}: true radius {sample['radius_m']:.3e} m within {SIGMAS:.0f} sigma (D_A = D_L / (1 + z)^2, "
                     "Hogg 1999)", ok, f"fit {r['value']:.4e} +- {r['error']:.2e} m, {zs:+.2f} sigma")


def diluted_members(label, sample, doc):
    ar = doc.get("derived", {}).get("angular_radius", {})
    given = sample["model"]["angular_radius"]
    checks.check(f"{label}: derived.angular_radius is the given one (value and error, mas)",
                 ar.get("unit") == "mas" and rel(ar.get("value"), given["value"]) < 1e-12
                 and rel(ar.get("error"), given["error"]) < 1e-9, repr({k: ar.get(k) for k in ("value", "error", "unit")}))
    zeta = doc["parameters"].get("dilution_factor", {})
    own = zeta.get("error", 0) / zeta.get("value", 1) if zeta else 0
    theta = given["error"] / given["value"]
    checks.check(f"{label}: the dilution factor's relative error includes the angular radius's ({theta:.3f})",
                 own >= theta, f"{own:.4f}")


def sample_checks(server, catalogue):
    docs = {}
    for sample in harness.load_truth(args.repo).get("model_samples", []):
        name = sample["name"]
        path = os.path.join(SAMPLES, sample["json"])
        with open(path, "rb") as f:
            body = f.read()
        label = f"{name} ({sample['kind']})"
        doc = fitted(f"{label} JSON over HTTP", http("POST", server, FIT, data=body, headers=JSON_CT))
        code, cli_doc, err = harness.run_cli(args.cli, ["fit", path])
        checks.check(f"{label} through the CLI (planckton fit FILE): exit 0", code == 0 and cli_doc is not None,
                     err.strip()[:200])
        if doc is None:
            continue
        docs[name] = doc
        diff = harness.strict_diff(cli_doc, doc) if cli_doc is not None else "no CLI document"
        checks.check(f"{label}: CLI and HTTP give the same document, every number equal", diff is None, diff or "")
        checks.check(f"{label}: model is {sample['kind']}", doc.get("model") == sample["kind"], doc.get("model"))
        truth_checks(label, sample, doc)
        if "extinction" in sample["model"]:
            extinction_members(label, sample, doc, catalogue)
        if sample["kind"] == "modified_black_body":
            dust_members(label, sample, doc)
        if sample["kind"] == "two_temperature":
            component_members(label, sample, doc)
        if "redshift" in sample["model"]:
            frame_members(label, sample, doc)
        if sample["kind"] == "diluted_planck":
            diluted_members(label, sample, doc)
        for member, wanted in (("extinction", "extinction" in sample["model"]), ("frames", "redshift" in sample["model"]),
                               ("components", sample["kind"] == "two_temperature")):
            if not wanted:
                checks.check(f"{label}: no {member} member (the model has none)", member not in doc, repr(list(doc)))
    checks.check("five model samples in truth.json, each answered", len(docs) == 5, repr(list(docs)))
    return docs


# ---- table query parameters ----------------------------------------------------------------------------

def photometry_table(request):
    rows = "".join(f"{m['band']},{m['value']!r},{m['error']!r},{m['unit']}\n" for m in request["photometry"])
    return "# the bands of bfc-7-dust-clump.json\nband,value,error,unit\n" + rows


def spectrum_table(request):
    s = request["spectrum"]
    return "x,y,y_error\n" + "".join(f"{x!r},{y!r},{e!r}\n" for x, y, e in zip(s["x"], s["y"], s["y_error"]))


def table_checks(server, docs):
    truth = {s["name"]: s for s in harness.load_truth(args.repo).get("model_samples", [])}
    clump = load("bfc-7-dust-clump.json")
    text = photometry_table(clump).encode()
    r = http("POST", server, FIT + "?" + harness.query([("model", "modified_black_body"), ("fix", "beta:2")]), data=text,
             headers=CSV_CT)
    doc = fitted("CSV photometry table with ?model=modified_black_body&fix=beta:2", r)
    if doc is not None:
        beta = doc["parameters"].get("beta", {})
        checks.check("?fix=beta:2: beta fixed at 2, no error, not among the correlated parameters",
                     beta.get("value") == 2.0 and beta.get("fixed") is True and beta.get("error") is None
                     and "beta" not in (doc.get("correlation") or {}).get("parameters", []),
                     repr({k: beta.get(k) for k in ("value", "fixed", "error")}))
        checks.check("?fix=beta:2: modified_black_body, thin form (temperature, scale, beta)",
                     doc.get("model") == "modified_black_body" and list(doc["parameters"]) == ["temperature", "scale", "beta"],
                     repr(list(doc["parameters"])))
        same = post_json(server, {"photometry": clump["photometry"],
                                  "model": {"kind": "modified_black_body", "parameters": {"beta": {"fixed": 2}}}})
        diff = harness.strict_diff(doc, json_of(same))
        checks.check("?model=modified_black_body&fix=beta:2 is model.parameters.beta.fixed = 2 as JSON (same document)",
                     diff is None, diff or "")
    r = http("POST", server, FIT + "?" + harness.query([("model", "modified_black_body"), ("opacity", "general"),
                                                         ("fix", "beta:1.8")]), data=text, headers=CSV_CT)
    doc = fitted("CSV photometry table with ?opacity=general&fix=beta:1.8", r)
    if doc is not None:
        checks.check("?opacity=general: the general form fits turnover_frequency",
                     "turnover_frequency" in doc["parameters"] and doc["parameters"]["beta"]["fixed"] is True,
                     repr(list(doc["parameters"])))

    star = truth.get("tms-0351-reddened-star")
    if star is not None:
        with open(os.path.join(SAMPLES, star["csv"]), "rb") as f:
            csv_body = f.read()
        pairs = [("x_unit", star["x_unit"]), ("y_unit", star["y_unit"]), ("extinction", "cardelli1989")]
        doc = fitted("the reddened star's CSV with ?extinction=cardelli1989", http("POST", server, FIT + "?" + harness.query(pairs),
                                                                                  data=csv_body, headers=CSV_CT))
        if doc is not None:
            checks.check("?extinction=cardelli1989 fits color_excess (mag)", doc["parameters"].get("color_excess", {}).get("unit") == "mag",
                         repr(list(doc["parameters"])))
            diff = harness.strict_diff(doc, docs.get(star["name"]))
            checks.check("the CSV with ?extinction=cardelli1989 gives the JSON request's document", diff is None, diff or "")
        r = http("POST", server, FIT + "?" + harness.query(pairs + [("r_v", "2.5")]), data=csv_body, headers=CSV_CT)
        doc = fitted("the reddened star's CSV with ?extinction=cardelli1989&r_v=2.5", r)
        if doc is not None:
            checks.check("?r_v=2.5 is the extinction's R_V", doc.get("extinction", {}).get("r_v") == 2.5,
                         repr(doc.get("extinction", {}).get("r_v")))
        check_problem(checks, "?r_v without ?extinction", http("POST", server, FIT + "?" + harness.query(pairs[:2] + [("r_v", "3.1")]),
                                                              data=csv_body, headers=CSV_CT),
                      status=422, parameter="r_v", schema=schema)
        check_problem(checks, "?extinction=seaton1979 (an unknown law)",
                      http("POST", server, FIT + "?" + harness.query(pairs[:2] + [("extinction", "seaton1979")]),
                           data=csv_body, headers=CSV_CT), status=422, parameter="extinction", accepted=True, schema=schema)
        check_problem(checks, "?fix=beta (no value)", http("POST", server, FIT + "?" + harness.query(pairs[:2] + [("fix", "beta")]),
                                                          data=csv_body, headers=CSV_CT), status=422, parameter="fix",
                      schema=schema)

    flare = truth.get("tms-f044-redshifted-flare")
    if flare is not None:
        request = load(flare["json"])
        distance = request["options"]["distance"]
        pairs = [("x_unit", flare["x_unit"]), ("y_unit", flare["y_unit"]), ("redshift", repr(request["model"]["redshift"])),
                 ("distance", f"{distance['value']} {distance['unit']}")]
        doc = fitted("the flare as a CSV table with ?redshift=0.8&distance=...",
                     http("POST", server, FIT + "?" + harness.query(pairs), data=spectrum_table(request).encode(),
                          headers=CSV_CT))
        diff = harness.strict_diff(doc, docs.get(flare["name"])) if doc is not None else "no document"
        checks.check("the CSV with ?redshift gives the JSON request's document", diff is None, diff or "")


# ---- representations and batch --------------------------------------------------------------------------

def representation_checks(server):
    for name in ("bfc-7-dust-clump.json", "tms-0418-composite-binary.json"):
        body = harness.compact(load(name))
        r = http("POST", server, FIT, data=body, headers=dict(JSON_CT, Accept="text/csv"))
        ok = is_response(r) and r.status_code == 200 and media_type(r) == "text/csv"
        checks.check(f"{name} with Accept: text/csv: 200 text/csv", ok, "" if ok else describe(r))
        if ok:
            lines = r.text.split("\n")
            checks.check(f"{name} as CSV: '#' lines name the model, then a header and a row per point or band",
                         lines[0].startswith("#") and "model" in lines[0] and any(l and not l.startswith("#") for l in lines),
                         lines[0][:120])
        r = http("POST", server, FIT, data=body, headers=dict(JSON_CT, Accept="image/svg+xml"))
        ok = is_response(r) and r.status_code == 200 and media_type(r) == "image/svg+xml"
        checks.check(f"{name} with Accept: image/svg+xml: 200 image/svg+xml", ok, "" if ok else describe(r))
        if ok:
            try:
                root = ET.fromstring(r.content)
                checks.check(f"{name} as SVG: parses as XML, an <svg> root with a <title>",
                             root.tag.endswith("svg") and root.find("{http://www.w3.org/2000/svg}title") is not None, root.tag)
            except ET.ParseError as e:
                checks.check(f"{name} as SVG: parses as XML", False, str(e))


def batch_checks(server, docs):
    names = ["tms-0351-reddened-star", "bfc-7-dust-clump", "tms-f044-redshifted-flare"]
    lines = [harness.compact({"id": n, **load(n + ".json")}) for n in names]
    r = http("POST", server, BATCH, data=("\n".join(lines) + "\n").encode(), headers=NDJSON_CT)
    ok = is_response(r) and r.status_code == 200 and media_type(r) == "application/x-ndjson"
    checks.check("a batch of three model requests: 200 application/x-ndjson", ok, "" if ok else describe(r))
    if not ok:
        return
    answers = [json.loads(t) for t in r.text.splitlines() if t.strip()]
    summary = [(a.get("index"), a.get("id"), a.get("status")) for a in answers]
    checks.check("batch: index, id and status 200 for each model line", summary == [(i, n, 200) for i, n in enumerate(names)],
                 repr(summary))
    for a in answers:
        schema.check(checks, f"batch line {a.get('id')}: matches the OpenAPI BatchLine schema", a, BATCH, "post", 200,
                     "application/x-ndjson")
        single = docs.get(a.get("id"))
        diff = harness.strict_diff(harness.without_id(a.get("response")), single) if single else "no single answer"
        checks.check(f"batch line {a.get('id')}: the response is the POST /v1/fit document (the id aside)", diff is None,
                     diff or "")


# ---- bad model inputs ------------------------------------------------------------------------------------

def bad_request_checks(server, catalogue):
    star, clump, transient = load("tms-0351-reddened-star.json"), load("bfc-7-dust-clump.json"), load("tms-x031-transient.json")

    def with_model(document, model, options=None):
        d = copy.deepcopy(document)
        d["model"] = model
        if options is not None:
            d["options"] = options
        return d

    params = lambda p: {"kind": "planck", "parameters": p}  # noqa: E731
    cases = [
        ("unknown kind", with_model(star, {"kind": "grey_body"}), "/model/kind", True),
        ("unknown parameter name under model.parameters", with_model(star, params({"temperatur": {"fixed": 5000}})),
         "/model/parameters/temperatur", True),
        ("dilution_factor without an angular radius", with_model(transient, {"kind": "diluted_planck", "parameters":
                                                                              {"dilution_factor": {"fixed": 0.5}}}),
         "/model/parameters/dilution_factor", True),
        ("fixed together with bounds", with_model(star, params({"temperature": {"fixed": 5000, "bounds": [1000, 9000]}})),
         "/model/parameters/temperature/fixed", False),
        ("bounds reversed", with_model(star, params({"temperature": {"bounds": [9000, 1000]}})),
         "/model/parameters/temperature/bounds", False),
        ("initial outside the bounds", with_model(star, params({"temperature": {"bounds": [1000, 9000], "initial": 20000}})),
         "/model/parameters/temperature/initial", False),
        ("prior with sigma 0", with_model(star, params({"temperature": {"prior": {"mean": 5000, "sigma": 0}}})),
         "/model/parameters/temperature/prior/sigma", False),
        ("extinction law unknown", with_model(star, {"kind": "planck", "extinction": {"law": "seaton1979"}}),
         "/model/extinction/law", True),
        ("r_v 0", with_model(star, {"kind": "planck", "extinction": {"law": "cardelli1989", "r_v": 0}}),
         "/model/extinction/r_v", False),
        ("r_v -3.1", with_model(star, {"kind": "planck", "extinction": {"law": "cardelli1989", "r_v": -3.1}}),
         "/model/extinction/r_v", False),
        ("radius without options.distance", with_model(transient, {"kind": "diluted_planck",
                                                                   "radius": {"value": 1e13, "unit": "m", "error": 4e11}}),
         "/model/radius", False),
        ("negative redshift", with_model(star, {"kind": "planck", "redshift": -0.1}), "/model/redshift", False),
        ("opacity given for planck", with_model(star, {"kind": "planck", "opacity": "thin"}), "/model/opacity", False),
        ("angular_radius given for modified_black_body", with_model(clump, {"kind": "modified_black_body",
                                                                            "angular_radius": {"value": 1, "unit": "mas"}}),
         "/model/angular_radius", False),
        ("model without kind", with_model(star, {"extinction": {"law": "cardelli1989"}}), "/model/kind", False),
    ]
    for name, document, pointer, accepted in cases:
        check_problem(checks, name, post_json(server, document), status=422, pointer=pointer, accepted=accepted, schema=schema)

    # Far-infrared photometry (50-600 um) with CCM89 (0.1-3.33 um): refused at /model/extinction, never
    # extrapolated; the detail names the law's range in um as GET /v1/models lists it.
    doc = check_problem(checks, "far-infrared photometry with cardelli1989", post_json(server, with_model(
        clump, {"kind": "modified_black_body", "extinction": {"law": "cardelli1989"}})), status=422,
        pointer="/model/extinction", schema=schema)
    ranges = {l["law"]: l["range_um"] for l in (catalogue or {}).get("modifiers", {}).get("extinction", {}).get("laws", [])}
    lo, hi = ranges.get("cardelli1989", [0.1, 10 / 3])
    detail = (doc or {}).get("detail", "")
    checks.check(f"far-infrared photometry with cardelli1989: the detail names the range, {lo:g} um to {hi:g} um",
                 f"{lo:g} um to {hi:g} um" in detail and "not extrapolated" in detail, detail[:200])
    r = post_json(server, star)
    checks.check("a good model request is answered 200 after the bad ones", is_response(r) and r.status_code == 200,
                 describe(r, 120))


# ---- the peak of optically thin dust -----------------------------------------------------------------------

def peak_checks(server):
    """peaks.frequency and peaks.wavelength of the thin modified black body at fixed beta against the roots
    of (n + beta)(1 - e^-x) = x, n = 3 (F_nu) and 5 (F_lambda), from scipy.optimize.brentq."""
    from scipy.optimize import brentq
    clump = load("bfc-7-dust-clump.json")
    for beta in (0.5, 1.0, 1.5, 2.0, 2.5):
        request = copy.deepcopy(clump)
        request["model"]["parameters"] = {"beta": {"fixed": beta}}
        doc = fitted(f"the clump with beta fixed at {beta}", post_json(server, request))
        if doc is None:
            continue
        t = doc["parameters"]["temperature"]["value"]
        peaks = doc.get("peaks", {})
        for curve, n, unit in (("frequency", 3, "Hz"), ("wavelength", 5, "nm")):
            x = brentq(lambda v: (n + beta) * -math.expm1(-v) - v, 0.5, 20.0, xtol=1e-14, rtol=4 * sys.float_info.epsilon)
            peak = peaks.get(curve, {})
            got = peak.get("reduced_frequency")
            checks.check(f"beta {beta}: peaks.{curve}.reduced_frequency solves ({n} + beta)(1 - e^-x) = x to 1e-9 "
                         f"(scipy.optimize.brentq, scipy 1.10, Debian): x = {x:.12f}",
                         isinstance(got, float) and abs(got - x) <= 1e-9, f"got {got!r}, off by {abs((got or 0) - x):.1e}")
            value = x * K * t / H if curve == "frequency" else H * C / (x * K * t) * 1e9
            formula = "x k T / h" if curve == "frequency" else "h c / (x k T)"
            checks.check(f"beta {beta}: peaks.{curve} is {formula} ({unit}) at the fitted T, to 1e-9 (CODATA 2018 h, c, k)",
                         peak.get("unit") == unit and rel(peak.get("value"), value) <= 1e-9,
                         f"got {peak.get('value')!r} {peak.get('unit')}, want {value!r}")


def main():
    server = start_checked_server(checks, schema, args.server)
    if server is None:
        return
    catalogue = models_endpoint(server)
    docs = sample_checks(server, catalogue)
    table_checks(server, docs)
    representation_checks(server)
    batch_checks(server, docs)
    bad_request_checks(server, catalogue)
    peak_checks(server)
    server.stop(checks)


harness.crash_guard(checks, main)

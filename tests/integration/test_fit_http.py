"""POST /v1/fit end to end against the real server: every sample spectrum as a JSON request and as a
CSV table (through curl and through requests), the truth of sample-spectra/truth.json within the
95 % interval, the same document from the CLI and from HTTP, "id" echoed as the first member; the
self-description endpoints (/v1/models, /v1/units, /v1/health, /openapi.yaml); every JSON answer
validated against openapi/openapi.yaml (JSON Schema Draft 2020-12, $ref into components/schemas)."""
import json
import os
import re

import sys

sys.dont_write_bytecode = True  # no __pycache__ in the source tree
import harness  # noqa: E402
from harness import Checks, OpenAPI, Server, start_checked_server, check_problem, http, is_response, json_of, media_type, describe

args = harness.parse_args(__doc__)
checks = Checks(args.require_schema)
schema = OpenAPI(args.repo)
SAMPLES = os.path.join(args.repo, "sample-spectra")


def check_truth(label, doc, sample):
    """The truth of the sample lies in the reported 95 % intervals (temperature, scale, radius)."""
    try:
        t = doc["parameters"]["temperature"]
        lo, hi = t["interval_95"]
        true_t = sample["temperature_K"]
        checks.check(f"{label}: true T {true_t} K within the 95 % interval", lo <= true_t <= hi,
                     f"fit {t['value']:.2f} K, interval [{lo:.2f}, {hi:.2f}]")
        s = doc["parameters"]["scale"]
        slo, shi = s["interval_95"]
        checks.check(f"{label}: true scale within the 95 % interval", slo <= sample["scale"]["value"] <= shi,
                     f"fit {s['value']:.4e}, interval [{slo:.4e}, {shi:.4e}], true {sample['scale']['value']:.4e}")
        if "distance" in sample.get("options", {}) and "radius_m" in sample:
            r = doc["derived"]["radius"]
            checks.check(f"{label}: true radius within the 95 % interval",
                         r["interval_95"][0] <= sample["radius_m"] <= r["interval_95"][1],
                         f"fit {r['value']:.4e} m, true {sample['radius_m']:.4e} m")
        checks.check(f"{label}: status converged", doc.get("status") == "converged", doc.get("status"))
    except (KeyError, TypeError, ValueError) as e:
        checks.check(f"{label}: response has the temperature and scale intervals", False, f"{type(e).__name__}: {e}")


def check_fit_answer(label, r):
    """200 application/json with a parsed document; returns the document or None."""
    ok = is_response(r) and r.status_code == 200 and media_type(r) == "application/json"
    checks.check(f"{label}: 200 application/json", ok, "" if ok else describe(r))
    doc = json_of(r) if ok else None
    if ok and doc is None:
        checks.check(f"{label}: body parses as JSON", False, describe(r))
    return doc


def same(label, a, b):
    diff = harness.strict_diff(a, b)
    checks.check(label, a is not None and b is not None and diff is None,
                 "one side missing" if a is None or b is None else (diff or ""))


def flatten_strings(node):
    if isinstance(node, str):
        return [node]
    if isinstance(node, list):
        return [s for item in node for s in flatten_strings(item)]
    if isinstance(node, dict):
        return [s for item in node.values() for s in flatten_strings(item)]
    return []


def fits(server):
    truth = harness.load_truth(args.repo)
    first_doc = None
    for sample in truth["samples"]:
        name = sample["name"]
        json_path = os.path.join(SAMPLES, sample["json"])
        csv_path = os.path.join(SAMPLES, sample["csv"])
        with open(json_path, "rb") as f:
            body = f.read()

        # JSON request over HTTP and through the CLI.
        r = http("POST", server, "/v1/fit", data=body, headers={"Content-Type": "application/json"})
        doc = check_fit_answer(f"{name} JSON over HTTP", r)
        if doc is not None:
            first_doc = first_doc or doc
            check_truth(f"{name} JSON over HTTP", doc, sample)
            schema.check(checks, f"{name} JSON over HTTP: response matches the OpenAPI schema", doc,
                         "/v1/fit", "post", 200, "application/json")
        code, cli_doc, err = harness.run_cli(args.cli, ["fit", json_path])
        checks.check(f"{name} JSON through the CLI: exit 0", code == 0 and cli_doc is not None, err.strip()[:200])
        same(f"{name} JSON: CLI and HTTP give the same document", cli_doc, doc)

        # "id" echoed as the first member, string and integer; the rest unchanged.
        request = json.loads(body)
        for given in (f"req-{name}", 4711):
            r = http("POST", server, "/v1/fit", data=harness.compact({"id": given, **request}),
                     headers={"Content-Type": "application/json"})
            with_id = json_of(r) if is_response(r) and r.status_code == 200 else None
            first = next(iter(with_id), None) if isinstance(with_id, dict) else None
            checks.check(f"{name}: id {given!r} echoed as the first member",
                         first == "id" and with_id.get("id") == given and type(with_id.get("id")) is type(given),
                         describe(r, 120) if with_id is None else f"first member {first!r}, id {with_id.get('id')!r}")
            if with_id is not None and doc is not None:
                same(f"{name}: id {given!r} changes nothing else", harness.without_id(with_id), doc)
            if with_id is not None:
                schema.check(checks, f"{name}: response with id {given!r} matches the OpenAPI schema", with_id,
                             "/v1/fit", "post", 200, "application/json")

        # CSV through curl (subprocess), through requests, and through the CLI with the same settings.
        pairs = harness.table_parameters(sample)
        url = server.url("/v1/fit?" + harness.query(pairs))
        rc, out, status, ctype = harness.curl(url, ["--data-binary", "@" + csv_path, "-H", "Content-Type: text/csv"])
        ok = rc == 0 and status == 200 and ctype.split(";")[0].strip() == "application/json"
        checks.check(f"{name} CSV through curl: exit 0, 200 application/json", ok,
                     f"curl exit {rc}, HTTP {status} {ctype} {out[:200]!r}")
        try:
            curl_doc = json.loads(out) if ok else None
        except json.JSONDecodeError as e:
            curl_doc = None
            checks.check(f"{name} CSV through curl: body parses as JSON", False, str(e))
        if curl_doc is not None:
            check_truth(f"{name} CSV through curl", curl_doc, sample)
            schema.check(checks, f"{name} CSV through curl: response matches the OpenAPI schema", curl_doc,
                         "/v1/fit", "post", 200, "application/json")
        with open(csv_path, "rb") as f:
            csv_body = f.read()
        r = http("POST", server, "/v1/fit?" + harness.query(pairs), data=csv_body, headers={"Content-Type": "text/csv"})
        req_doc = check_fit_answer(f"{name} CSV through requests", r)
        if req_doc is not None:
            check_truth(f"{name} CSV through requests", req_doc, sample)
        same(f"{name} CSV: curl and requests give the same document", curl_doc, req_doc)
        code, cli_csv, err = harness.run_cli(args.cli, ["fit", csv_path, *harness.cli_flags(pairs)])
        checks.check(f"{name} CSV through the CLI: exit 0", code == 0 and cli_csv is not None, err.strip()[:200])
        same(f"{name} CSV: CLI and HTTP give the same document (same options)", cli_csv, req_doc)
        same(f"{name}: CSV with the request's options and the JSON request give the same document", req_doc, doc)

    # The other table media types the plan names: TSV and text/plain (whitespace).
    sample = next(s for s in truth["samples"] if s["name"] == "tms-0112-cool-star")
    with open(os.path.join(SAMPLES, sample["csv"]), encoding="utf-8") as f:
        csv_text = f.read()
    pairs = harness.table_parameters(sample)
    r = http("POST", server, "/v1/fit?" + harness.query(pairs), data=csv_text.encode(),
             headers={"Content-Type": "text/csv"})
    csv_doc = json_of(r) if is_response(r) and r.status_code == 200 else None
    tsv = "\n".join(line if line.startswith("#") else line.replace(",", "\t") for line in csv_text.split("\n"))
    for ctype, text in (("text/tab-separated-values", tsv),
                        ("text/plain", tsv.replace("\t", "   ")),
                        ("text/csv; charset=utf-8", csv_text)):
        r = http("POST", server, "/v1/fit?" + harness.query(pairs), data=text.encode(), headers={"Content-Type": ctype})
        other = check_fit_answer(f"table as {ctype}", r)
        if other is not None:
            same(f"table as {ctype}: the same document as the CSV", other, csv_doc)
    with open(os.path.join(SAMPLES, sample["json"]), "rb") as f:
        json_body = f.read()
    r = http("POST", server, "/v1/fit", data=json_body, headers={"Content-Type": "application/json; charset=utf-8"})
    check_fit_answer("JSON with 'application/json; charset=utf-8'", r)

    # Keep-alive: several requests on one connection all answered.
    with harness.session() as s:
        statuses = []
        for _ in range(5):
            try:
                statuses.append(s.get(server.url("/v1/health"), timeout=10).status_code)
            except Exception as e:  # noqa: BLE001
                statuses.append(repr(e))
    checks.check("five requests on one keep-alive connection all 200", statuses == [200] * 5, statuses)
    return first_doc


def endpoints(server, fit_doc):
    # GET /v1/models: the model family, each kind with its parameters per variant, the modifiers
    # (extinction laws with their published ranges, redshift), parameter control and the options.
    r = http("GET", server, "/v1/models")
    doc = check_fit_answer("GET /v1/models", r)
    if doc is not None:
        models = doc.get("models") if isinstance(doc.get("models"), list) else []
        by_kind = {m.get("kind"): m for m in models if isinstance(m, dict)}
        kinds = [m.get("kind") for m in models if isinstance(m, dict)]
        checks.check("GET /v1/models: lists the four kinds of the model family, in order",
                     kinds == ["planck", "diluted_planck", "modified_black_body", "two_temperature"], kinds)
        # The parameters each variant fits, in order, as the request's model.parameters and the
        # response's parameters name them.
        expected = {
            "planck": [["temperature", "scale"]],
            "diluted_planck": [["temperature", "dilution_factor"], ["temperature", "angular_radius_dilution"]],
            "modified_black_body": [["temperature", "scale", "beta"], ["temperature", "scale", "beta", "turnover_frequency"]],
            "two_temperature": [["temperature_1", "scale_1", "temperature_2", "scale_2"]],
        }
        for kind, variants_expected in expected.items():
            model = by_kind.get(kind) or {}
            variants = model.get("variants") if isinstance(model.get("variants"), list) else []
            names = [[p.get("name") for p in v.get("parameters", []) if isinstance(p, dict)]
                     for v in variants if isinstance(v, dict)]
            checks.check(f"GET /v1/models: {kind} has a description and its parameters per variant",
                         isinstance(model.get("description"), str) and model.get("description")
                         and names == variants_expected
                         and all(isinstance(v.get("when"), str) and v.get("when") for v in variants),
                         f"variants {names}")
            parameters = [p for v in variants if isinstance(v, dict) for p in v.get("parameters", [])]
            well_formed = all(isinstance(p, dict) and isinstance(p.get("unit"), str) and p.get("unit")
                              and isinstance(p.get("meaning"), str) and isinstance(p.get("fitted_as"), str)
                              and isinstance(p.get("default_bounds"), list) and len(p["default_bounds"]) == 2
                              for p in parameters)
            checks.check(f"GET /v1/models: {kind}'s parameters each have a unit, meaning, fitted_as and default bounds",
                         parameters and well_formed, json.dumps(parameters)[:300])
            checks.check(f"GET /v1/models: {kind} fits spectra and photometry",
                         model.get("data") == ["spectrum", "photometry"], model.get("data"))
        temperatures = [p for m in models if isinstance(m, dict) for v in m.get("variants", []) if isinstance(v, dict)
                        for p in v.get("parameters", []) if isinstance(p, dict) and str(p.get("name", "")).startswith("temperature")]
        checks.check("GET /v1/models: every temperature is in K, fitted as its logarithm, default bounds [0.1, 1e9]",
                     temperatures and all(p.get("unit") == "K" and p.get("fitted_as") == "ln " + p.get("name")
                                          and p.get("default_bounds") == [0.1, 1e9] for p in temperatures),
                     json.dumps(temperatures)[:300])
        if fit_doc is not None and "planck" in by_kind:
            variant = (by_kind["planck"].get("variants") or [{}])[0]
            checks.check("GET /v1/models: planck's parameters are those a plain fit answers",
                         [p.get("name") for p in variant.get("parameters", [])] == list(fit_doc.get("parameters", {})),
                         f"fit answers {list(fit_doc.get('parameters', {}))}")

        # Extinction: the four laws with their published wavelength ranges (um) and default R_V.
        modifiers = doc.get("modifiers") if isinstance(doc.get("modifiers"), dict) else {}
        extinction = modifiers.get("extinction") if isinstance(modifiers.get("extinction"), dict) else {}
        laws = {law.get("law"): law for law in extinction.get("laws", []) if isinstance(law, dict)}
        published = {"cardelli1989": ([0.1, 10 / 3], 3.1), "odonnell1994": ([0.1, 10 / 3], 3.1),
                     "fitzpatrick1999": ([0.091, 6.0], 3.1), "calzetti2000": ([0.12, 2.2], 4.05)}
        checks.check("GET /v1/models: extinction lists the four laws", sorted(laws) == sorted(published), sorted(laws))
        for law, (range_um, r_v) in published.items():
            entry = laws.get(law) or {}
            got = entry.get("range_um")
            ok = (isinstance(got, list) and len(got) == 2 and all(isinstance(v, (int, float)) for v in got)
                  and all(abs(a - b) <= 1e-9 * abs(b) for a, b in zip(got, range_um))
                  and entry.get("default_r_v") == r_v and isinstance(entry.get("citation"), str) and entry.get("citation"))
            checks.check(f"GET /v1/models: {law} with its range {range_um[0]:g}-{range_um[1]:.4g} um, default R_V {r_v} and a citation",
                         ok, json.dumps(entry)[:200])
        checks.check("GET /v1/models: extinction adds color_excess; redshift is described",
                     "color_excess" in str(extinction.get("adds_parameter"))
                     and isinstance((modifiers.get("redshift") or {}).get("meaning"), str), json.dumps(modifiers)[:200])
        control = doc.get("parameter_control") if isinstance(doc.get("parameter_control"), dict) else {}
        checks.check("GET /v1/models: parameter control names fixed, bounds, prior and initial",
                     all(word in str(control.get("member")) for word in ("fixed", "bounds", "prior", "initial")),
                     control.get("member"))
        options = [o.get("name") for o in doc.get("options", []) if isinstance(o, dict)] if isinstance(doc.get("options"), list) else []
        checks.check("GET /v1/models: the options with their defaults",
                     options == ["temperature_bounds", "loss", "distance", "max_iterations", "time_budget_seconds",
                                 "systematic_error"] and all("default" in o for o in doc["options"])
                     and isinstance(doc.get("method"), str), options)
        schema.check(checks, "GET /v1/models: matches the OpenAPI schema", doc, "/v1/models", "get", 200,
                     "application/json")

    # GET /v1/units
    r = http("GET", server, "/v1/units")
    doc = check_fit_answer("GET /v1/units", r)
    if doc is not None:
        groups = ("spectral_axis", "flux_density", "intensity", "relative", "distance")
        checks.check("GET /v1/units: has spectral_axis, flux_density, intensity, relative, distance (lists) and syntax",
                     all(isinstance(doc.get(g), list) and doc.get(g) for g in groups) and isinstance(doc.get("syntax"), str),
                     list(doc.keys()))
        # The units README.md documents appear in their group.
        expected = {"spectral_axis": ["Angstrom", "nm", "um", "Hz", "THz", "cm-1", "eV", "keV"],
                    "flux_density": ["erg/s/cm2/Angstrom", "W/m2/nm", "W/m2/Hz", "Jy", "mJy", "photon/s/cm2/Angstrom"],
                    "intensity": ["W/m2/sr/nm", "W/m2/sr/Hz", "MJy/sr", "Jy/sr"],
                    "relative": ["relative/nm", "relative/Hz"],
                    "distance": ["pc"]}
        for group, units in expected.items():
            listed = flatten_strings(doc.get(group))
            missing = [u for u in units if u not in listed]
            checks.check(f"GET /v1/units: {group} lists the README's units", not missing, f"missing {missing}")
        schema.check(checks, "GET /v1/units: matches the OpenAPI schema", doc, "/v1/units", "get", 200,
                     "application/json")

    # GET /v1/health
    r = http("GET", server, "/v1/health")
    doc = check_fit_answer("GET /v1/health", r)
    if doc is not None:
        with open(os.path.join(args.repo, "CMakeLists.txt"), encoding="utf-8") as f:
            m = re.search(r"project\(\s*planckton\s+VERSION\s+([0-9.]+)", f.read())
        version = m.group(1) if m else None
        checks.check("GET /v1/health: status ok and the project's version", doc.get("status") == "ok"
                     and doc.get("version") == version, f"{doc} (CMakeLists.txt: {version})")
        if fit_doc is not None:
            checks.check("GET /v1/health: the same version as the fit's provenance",
                         doc.get("version") == fit_doc.get("provenance", {}).get("version"),
                         f"{doc.get('version')} vs {fit_doc.get('provenance', {}).get('version')}")
        schema.check(checks, "GET /v1/health: matches the OpenAPI schema", doc, "/v1/health", "get", 200,
                     "application/json")

    # GET /openapi.yaml
    import yaml
    r = http("GET", server, "/openapi.yaml")
    ok = is_response(r) and r.status_code == 200
    checks.check("GET /openapi.yaml: 200", ok, describe(r, 120))
    if ok:
        checks.check("GET /openapi.yaml: Content-Type application/yaml", media_type(r) == "application/yaml",
                     r.headers.get("Content-Type"))
        try:
            served = yaml.safe_load(r.content)
            parsed = True
        except yaml.YAMLError as e:
            served, parsed = None, False
            checks.check("GET /openapi.yaml: parses as YAML", False, str(e)[:200])
        if parsed:
            checks.check("GET /openapi.yaml: parses as YAML", True)
            version = served.get("openapi") if isinstance(served, dict) else None
            checks.check("GET /openapi.yaml: openapi is 3.1.x", isinstance(version, str) and re.fullmatch(r"3\.1\.\d+", version),
                         repr(version))
            for member in ("info", "paths"):
                checks.check(f"GET /openapi.yaml: has '{member}'", isinstance(served, dict) and member in served)
            if isinstance(served, dict):
                paths = served.get("paths") or {}
                wanted = ["/v1/fit", "/v1/fit/batch", "/v1/models", "/v1/units", "/v1/health", "/metrics"]
                missing = [p for p in wanted if p not in paths]
                checks.check("GET /openapi.yaml: documents every endpoint of the plan", not missing, f"missing {missing}")
            if schema.available:
                checks.check("GET /openapi.yaml: the same document as openapi/openapi.yaml of the repository",
                             served == schema.doc,
                             "" if served == schema.doc else "differs (rebuild the server after changing openapi.yaml?)")
            else:
                checks.skip_schema("GET /openapi.yaml: the same document as openapi/openapi.yaml", schema.problem)

    # One problem document against the schema (the bad-input script checks many more).
    r = http("POST", server, "/v1/fit", data=b'{"spectrum": [', headers={"Content-Type": "application/json"})
    check_problem(checks, "malformed JSON", r, status=400, schema=schema)


def main():
    server = start_checked_server(checks, schema, args.server)
    if server is None:
        return
    fit_doc = fits(server)
    endpoints(server, fit_doc)
    log = server.wait_for_log(1)
    checks.check("the access log has lines (one JSON object per request)", len(log) > 0, f"{len(log)} lines")
    server.stop(checks)


harness.crash_guard(checks, main)

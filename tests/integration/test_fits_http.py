"""FITS bodies end to end against the real server: every FITS sample of sample-spectra/ (made by
make_samples.py with astropy.io.fits from the same data as the JSON samples) posted as
application/fits (RFC 4047) gives the same temperature as its JSON twin, and the CLI reads the same
file to the same document; the FITS answers come as SVG and CSV too; damaged files are 400 problem
documents and files without a usable spectrum 422 ones naming what is missing, and the server answers
a good request after them. Every JSON answer is validated against openapi/openapi.yaml."""
import json
import os
import subprocess

import sys

sys.dont_write_bytecode = True  # no __pycache__ in the source tree
import harness  # noqa: E402
from harness import Checks, OpenAPI, start_checked_server, check_problem, describe, http, is_response, json_of, media_type

args = harness.parse_args(__doc__)
checks = Checks(args.require_schema)
schema = OpenAPI(args.repo)
SAMPLES = os.path.join(args.repo, "sample-spectra")
FIT = "/v1/fit"
FITS_CT = {"Content-Type": "application/fits"}
JSON_CT = {"Content-Type": "application/json"}

# Each FITS sample, the JSON sample with the same data, and the query parameters both need. The
# JSON twins carry their own options; the FITS files only their data. The bench lamp's FITS axis is
# in air (AWAV, written by make_samples.py) and converted back to vacuum (Morton 2000 as inverted
# for VALD), so its temperature agrees to that round trip (measured 1.1e-6 relative), not to
# rounding.
TWINS = [
    ("tms-0047-hot-star.fits", "tms-0047-hot-star.json", 1e-9),
    ("tms-0112-cool-star.fits", "tms-0112-cool-star.json", 1e-9),
    ("tms-0203-sunlike-star.fits", "tms-0203-sunlike-star.json", 1e-9),
    ("tms-0203-catalogue-sed.fits", "tms-0203-catalogue-sed.json", 1e-9),
    ("ql3-bench-lamp.fits", "ql3-bench-lamp.json", 1e-5),
]


def load(name):
    with open(os.path.join(SAMPLES, name), "rb") as f:
        return f.read()


def json_twin_query(name):
    """The JSON twin's options and exclude ranges as query parameters, so that both fits are the same."""
    document = json.loads(load(name))
    params = []
    for lo, hi in (document.get("spectrum") or {}).get("exclude", []):
        params.append(("exclude", f"{lo}:{hi}"))
    options = document.get("options") or {}
    if "distance" in options:
        params.append(("distance", f"{options['distance']['value']} {options['distance']['unit']}"))
    if "loss" in options:
        params.append(("loss", options["loss"]["kind"]))
        if "scale" in options["loss"]:
            params.append(("loss_scale", str(options["loss"]["scale"])))
    if "temperature_bounds" in options:
        params.append(("temperature_min", str(options["temperature_bounds"][0])))
        params.append(("temperature_max", str(options["temperature_bounds"][1])))
    if "systematic_error" in options:
        params.append(("systematic_error", str(options["systematic_error"])))
    return document, params


def temperature(doc):
    return doc["parameters"]["temperature"]["value"]


def twins(server):
    for fits_name, json_name, tolerance in TWINS:
        document, params = json_twin_query(json_name)
        r_json = http("POST", server, FIT, data=json.dumps(document).encode(), headers=JSON_CT)
        r_fits = http("POST", server, FIT, data=load(fits_name), headers=FITS_CT, params=params)
        ok = is_response(r_fits) and r_fits.status_code == 200 and media_type(r_fits) == "application/json"
        checks.check(f"{fits_name}: 200 application/json", ok, "" if ok else describe(r_fits))
        if not ok or not is_response(r_json) or r_json.status_code != 200:
            continue
        doc = json_of(r_fits)
        schema.check(checks, f"{fits_name}: response matches the OpenAPI schema", doc, FIT, "post", 200, "application/json")
        t_fits, t_json = temperature(doc), temperature(json_of(r_json))
        checks.check(f"{fits_name}: temperature as the JSON twin's to {tolerance:g}",
                     abs(t_fits / t_json - 1.0) <= tolerance, f"{t_fits} vs {t_json}")
        checks.check(f"{fits_name}: the response says what was read from the file",
                     bool(doc["input"].get("fits")), repr(doc["input"].get("fits")))
        cli = subprocess.run([args.cli, "fit", os.path.join(SAMPLES, fits_name), "--compact"] +
                             [f"--{name.replace('_', '-')}={value}" for name, value in params],
                             capture_output=True, timeout=60)
        same = cli.returncode == 0 and json.loads(cli.stdout) == doc
        checks.check(f"{fits_name}: the CLI reads the file to the same document", same,
                     cli.stderr.decode()[:200])


def representations(server):
    body = load("tms-0112-cool-star.fits")
    r = http("POST", server, FIT, data=body, headers={**FITS_CT, "Accept": "image/svg+xml"})
    checks.check("FITS body with Accept: image/svg+xml answers an SVG picture",
                 is_response(r) and r.status_code == 200 and media_type(r) == "image/svg+xml" and b"<svg" in r.content,
                 describe(r, 120))
    r = http("POST", server, FIT + "?format=csv", data=body, headers=FITS_CT)
    checks.check("FITS body with ?format=csv answers the CSV table",
                 is_response(r) and r.status_code == 200 and media_type(r) == "text/csv" and b"x,y,y_error,model" in r.content,
                 describe(r, 120))


def bad_files(server):
    good = load("tms-0112-cool-star.fits")
    cases = [
        ("not FITS at all", b"x,y\n500,1\n600,2\n", 400, None),
        ("a FITS file cut in its first header", good[:1000], 400, None),
        ("a FITS file cut in its data", good[:2880 * 3 + 100], 400, None),
        ("a gzip-compressed FITS file", b"\x1f\x8b\x08\x00" + good[:200], 400, None),
        ("an empty body", b"", None, None),
        ("an HDU that does not exist", good, 422, "hdu"),
        ("an error column that does not exist", good, 422, "error_column"),
        ("an unknown parameter", good, 422, "colour"),
    ]
    params_for = {"an HDU that does not exist": {"hdu": "NOSUCH"},
                  "an error column that does not exist": {"error_column": "nosuch"},
                  "an unknown parameter": {"colour": "blue"}}
    for label, body, status, parameter in cases:
        r = http("POST", server, FIT, data=body, headers=FITS_CT, params=params_for.get(label, {}))
        if status is None:
            check_problem(checks, f"FITS: {label}", r, statuses=(400, 411, 422), schema=schema)
        else:
            check_problem(checks, f"FITS: {label}", r, status=status, parameter=parameter, schema=schema)
    r = http("POST", server, FIT, data=good, headers=FITS_CT)
    checks.check("a good FITS body is answered 200 after the bad ones", is_response(r) and r.status_code == 200,
                 describe(r, 120))


def main():
    server = start_checked_server(checks, schema, args.server)
    if server is None:
        return
    twins(server)
    representations(server)
    bad_files(server)
    server.stop(checks)


harness.crash_guard(checks, main)

"""The CLI fits every sample spectrum (JSON request and CSV table) and the truth recorded by
sample-spectra/make_samples.py lies within the reported 95 % interval (the samples are synthetic,
so their true values are known exactly).

The photometry samples too ("photometry_samples" of truth.json): make_samples.py integrates the
true spectrum through the same response curves with the definitions of Bessell & Murphy 2012 (PASP
124, 140, appendix A) and each band's convention as planckton quotes it, by its own trapezoid rule;
so besides the truth within the 95 % interval of the noisy sample, the noise-free band values
recorded in truth.json must give back the true temperature to a small fraction of its error.

The model family ("model_samples" of truth.json): every true parameter of each model (extinction,
modified black body with its dust mass, two temperatures, diluted photosphere, redshift) within the
reported 95 % interval, and the reddened star's CSV with --extinction giving the JSON's document."""
import argparse
import json
import os

from clitest import Checks, run_cli

parser = argparse.ArgumentParser()
parser.add_argument("--cli", required=True)
parser.add_argument("--samples", required=True)
args = parser.parse_args()
checks = Checks()

with open(os.path.join(args.samples, "truth.json")) as f:
    truth = json.load(f)

for sample in truth["samples"]:
    name = sample["name"]
    true_t = sample["temperature_K"]
    code, doc, err = run_cli(args.cli, ["fit", os.path.join(args.samples, sample["json"])])
    checks.check(f"{name}: JSON request fits", code == 0 and doc is not None, err.strip())
    if doc is None:
        continue
    t = doc["parameters"]["temperature"]
    lo, hi = t["interval_95"]
    checks.check(f"{name}: true T {true_t} K within the 95 % interval", lo <= true_t <= hi,
                 f"fit {t['value']:.2f} +- {t['error']:.2f} K, interval [{lo:.2f}, {hi:.2f}]")
    scale = doc["parameters"]["scale"]
    slo, shi = scale["interval_95"]
    checks.check(f"{name}: true scale within the 95 % interval", slo <= sample["scale"]["value"] <= shi,
                 f"fit {scale['value']:.4e}, true {sample['scale']['value']:.4e}")
    checks.check(f"{name}: response names the constants", doc["provenance"]["constants"] == "CODATA 2018")

    # The CSV of the same sample, with the request's exclude ranges, loss and distance as options.
    flags = sample["cli_flags"].split()
    for lo_hi in sample.get("exclude", []):
        flags += ["--exclude", f"{lo_hi[0]}:{lo_hi[1]}"]
    options = sample.get("options", {})
    if "loss" in options:
        flags += ["--loss", options["loss"]["kind"], "--loss-scale", str(options["loss"]["scale"])]
    if "distance" in options:
        flags += ["--distance", f"{options['distance']['value']} {options['distance']['unit']}"]
    code, table_doc, err = run_cli(args.cli, ["fit", os.path.join(args.samples, sample["csv"]), *flags])
    checks.check(f"{name}: CSV table fits", code == 0 and table_doc is not None, err.strip())
    if table_doc is not None:
        same = abs(table_doc["parameters"]["temperature"]["value"] - t["value"]) <= 1e-9 * t["value"]
        checks.check(f"{name}: CSV and JSON give the same temperature", same,
                     f"{table_doc['parameters']['temperature']['value']} vs {t['value']}")
        checks.check(f"{name}: CSV and JSON give the same document",
                     json.dumps(table_doc, sort_keys=True) == json.dumps(doc, sort_keys=True))
    if "distance" in options:
        checks.check(f"{name}: radius and luminosity reported with a distance",
                     "radius" in doc["derived"] and "luminosity" in doc["derived"])
        if "radius_m" in sample:
            r = doc["derived"]["radius"]
            checks.check(f"{name}: true radius within the 95 % interval",
                         r["interval_95"][0] <= sample["radius_m"] <= r["interval_95"][1],
                         f"fit {r['value']:.4e} m, true {sample['radius_m']:.4e} m")


def distance_flags(options):
    return ["--distance", f"{options['distance']['value']} {options['distance']['unit']}"] if "distance" in options else []


for sample in truth.get("photometry_samples", []):
    name = sample["name"]
    true_t = sample["temperature_K"]
    request_path = os.path.join(args.samples, sample["json"])
    code, doc, err = run_cli(args.cli, ["fit", request_path])
    checks.check(f"{name}: JSON photometry request fits", code == 0 and doc is not None, err.strip())
    if doc is None:
        continue
    t = doc["parameters"]["temperature"]
    lo, hi = t["interval_95"]
    checks.check(f"{name}: true T {true_t} K within the 95 % interval", lo <= true_t <= hi,
                 f"fit {t['value']:.3f} +- {t['error']:.3f} K, interval [{lo:.3f}, {hi:.3f}]")
    scale = doc["parameters"]["scale"]
    slo, shi = scale["interval_95"]
    checks.check(f"{name}: true scale within the 95 % interval", slo <= sample["scale"]["value"] <= shi,
                 f"fit {scale['value']:.4e}, true {sample['scale']['value']:.4e}, interval [{slo:.4e}, {shi:.4e}]")
    limits = sum(1 for b in sample["bands"] if b["upper_limit"])
    checks.check(f"{name}: {len(sample['bands'])} bands, {limits} upper limit(s) counted",
                 doc["statistics"]["bands_given"] == len(sample["bands"]) and doc["statistics"]["upper_limits"] == limits,
                 f"statistics {doc['statistics']['bands_given']} bands, {doc['statistics']['upper_limits']} limits")
    for truth_band, band in zip(sample["bands"], doc["bands"]):
        if truth_band["upper_limit"]:
            checks.check(f"{name}: the model lies below the {truth_band['band']} upper limit",
                         band["model"] < band["value"], f"model {band['model']:.4g} vs limit {band['value']:.4g} "
                                                        f"{band['unit']}")
    if "radius_m" in sample and "distance" in sample["options"]:
        r = doc["derived"]["radius"]
        checks.check(f"{name}: true radius within the 95 % interval",
                     r["interval_95"][0] <= sample["radius_m"] <= r["interval_95"][1],
                     f"fit {r['value']:.4e} m, true {sample['radius_m']:.4e} m")

    # The same bands as a table (band,value,error,unit), the distance as a flag.
    if sample.get("csv"):
        code, table_doc, err = run_cli(args.cli, ["fit", os.path.join(args.samples, sample["csv"]),
                                                  *distance_flags(sample["options"])])
        checks.check(f"{name}: CSV photometry table fits", code == 0 and table_doc is not None, err.strip())
        if table_doc is not None:
            table_t = table_doc["parameters"]["temperature"]["value"]
            checks.check(f"{name}: CSV and JSON give the same temperature (1e-9 relative)",
                         abs(table_t - t["value"]) <= 1e-9 * t["value"], f"{table_t} vs {t['value']}")
            checks.check(f"{name}: CSV and JSON give the same document",
                         json.dumps(table_doc, sort_keys=True) == json.dumps(doc, sort_keys=True))

    # Noise-free: the request with every detection replaced by make_samples.py's band value of the true
    # spectrum (the limits kept: they pull the fit a little). Generator and planckton integrate the bands
    # independently (trapezoid, 64 pieces per curve interval, against Gaussian quadrature in ln lambda).
    with open(request_path) as f:
        request = json.load(f)
    for measurement, truth_band in zip(request["photometry"], sample["bands"]):
        if not truth_band["upper_limit"]:
            measurement["value"] = truth_band["model_value"]
    code, clean, err = run_cli(args.cli, ["fit", "-"], stdin=json.dumps(request))
    checks.check(f"{name}: noise-free band values fit", code == 0 and clean is not None, err.strip())
    if clean is not None:
        ct = clean["parameters"]["temperature"]
        tolerance = 0.01 * ct["error"] if limits else 1e-6 * true_t
        checks.check(f"{name}: noise-free band values give back the true T",
                     abs(ct["value"] - true_t) <= tolerance,
                     f"fit {ct['value']:.6f} K, true {true_t} K, off by {(ct['value'] - true_t) / ct['error']:+.2e} "
                     f"sigma (allowed {tolerance:.2e} K)")


# The model family ("model_samples" of truth.json): one request per model, each true parameter (in the
# units of GET /v1/models) within the reported 95 % interval, and what each model derives.
for sample in truth.get("model_samples", []):
    name = f"{sample['name']} ({sample['kind']})"
    code, doc, err = run_cli(args.cli, ["fit", os.path.join(args.samples, sample["json"])])
    checks.check(f"{name}: JSON request fits", code == 0 and doc is not None, err.strip())
    if doc is None:
        continue
    checks.check(f"{name}: model {sample['kind']}, converged", doc["model"] == sample["kind"] and doc["status"] == "converged",
                 f"{doc['model']}, {doc['status']}")
    for parameter, true_value in sample["parameters"].items():
        p = doc["parameters"][parameter]
        lo, hi = p["interval_95"]
        checks.check(f"{name}: true {parameter} {true_value:.6g} {p['unit']} within the 95 % interval",
                     lo <= true_value <= hi and p["unit"] == sample["parameter_units"][parameter],
                     f"fit {p['value']:.6g} +- {p['error']:.3g} {p['unit']}, interval [{lo:.6g}, {hi:.6g}]")
    if "dust_mass_kg" in sample:
        m = doc["derived"].get("dust_mass")
        checks.check(f"{name}: true dust mass within the 95 % interval",
                     m is not None and m["interval_95"][0] <= sample["dust_mass_kg"] <= m["interval_95"][1],
                     f"fit {m['value']:.4e} kg, true {sample['dust_mass_kg']:.4e} kg" if m else "no derived.dust_mass")
    if "radius_m" in sample and "distance" in sample.get("options", {}):
        r = doc["derived"]["radius"]
        checks.check(f"{name}: true radius within the 95 % interval",
                     r["interval_95"][0] <= sample["radius_m"] <= r["interval_95"][1],
                     f"fit {r['value']:.4e} m, true {sample['radius_m']:.4e} m")
    if "observed_temperature_K" in sample:
        t = doc["frames"]["observed"]["temperatures"]["temperature"]
        checks.check(f"{name}: true observed temperature T / (1 + z) within the 95 % interval",
                     t["interval_95"][0] <= sample["observed_temperature_K"] <= t["interval_95"][1],
                     f"fit {t['value']:.1f} K, true {sample['observed_temperature_K']:.1f} K")
    if sample.get("csv"):
        code, table_doc, err = run_cli(args.cli, ["fit", os.path.join(args.samples, sample["csv"]),
                                                  *sample["cli_flags"].split()])
        checks.check(f"{name}: CSV table with {sample['cli_flags']} fits", code == 0 and table_doc is not None, err.strip())
        if table_doc is not None:
            checks.check(f"{name}: CSV and JSON give the same document",
                         json.dumps(table_doc, sort_keys=True) == json.dumps(doc, sort_keys=True))

checks.finish()

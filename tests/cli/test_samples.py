"""The CLI fits every sample spectrum (JSON request and CSV table) and the truth recorded by
sample-spectra/make_samples.py lies within the reported 95 % interval (the samples are synthetic,
so their true values are known exactly)."""
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

checks.finish()

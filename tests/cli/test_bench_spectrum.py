"""The spectrum planckton-bench fits (--dump-spectrum) is readable by the CLI and fits back to the
true values written in its header: the benchmark measures a fit that works."""
import argparse
import re
import subprocess

from clitest import Checks, run_cli

parser = argparse.ArgumentParser()
parser.add_argument("--bench", required=True)
parser.add_argument("--cli", required=True)
args = parser.parse_args()
checks = Checks()
for n in (100, 1000):
    csv = subprocess.run([args.bench, f"--dump-spectrum={n}"], capture_output=True, text=True, check=True).stdout
    true_t = float(re.search(r"true temperature: (\S+)", csv).group(1))
    code, doc, err = run_cli(args.cli, ["fit", "-", "--x-unit", "nm", "--y-unit", "W/m2/nm"], stdin=csv)
    ok = code == 0 and doc is not None
    checks.check(f"BM_FitSpectrum/{n} spectrum fits", ok, err.strip())
    if ok:
        t = doc["parameters"]["temperature"]
        checks.check(f"BM_FitSpectrum/{n}: truth within 95 %", t["interval_95"][0] <= true_t <= t["interval_95"][1],
                     f"{t['value']:.3f} +- {t['error']:.3f} K vs {true_t}")
checks.finish()

#!/usr/bin/python3
"""planckton's posterior sampler against python3-emcee.

Usage: test_posterior_emcee.py --values-tool PATH [--keep DIR]

Two fits, with data this script simulates from a fixed numpy seed and writes
to a JSON file for planckton-posterior-values (tests/posterior_values.cpp):

* planck: a 5,000 K black body subtending 1e-17 sr, 60 points log-spaced over
  0.3-3 um, F_nu in W/m2/Hz with 2 % Gaussian errors; free (ln T, ln S).
* modified_black_body: optically thin dust, S (nu / 1e12 Hz)^beta B_nu(T)
  with T = 20 K, beta = 1.7, S = 2e-9, at 12 far-infrared points log-spaced
  over 70-850 um with 5 % errors; free (ln T, ln S, beta).

The tool fits each (fit_model with the default options), builds the
ModelPosterior and samples it with sample_ensemble (core/science/
ensemble_sampler.h), starting from the fit with the fit's one-sigma errors as
the ball's scale.  This script writes the same log-probability in Python --
Planck's law with the CODATA 2018 constants (astropy.constants, via
common.py), y = S 2 h nu^3 / c^2 / (exp(h nu / k T) - 1) [(nu / 1e12)^beta],
chi^2 with the given errors, flat in u = (ln T, ln S[, beta]) inside the
bounds of core/science/model.cpp model_parameters (T in [0.1, 1e9] K, S > 0,
beta in [0, 5]) -- and samples it with emcee.EnsembleSampler (default
StretchMove, a = 2), same walkers, steps, burn-in and starting ball, fixed
numpy seed.  Checks:

* the data the fit saw are the data written (frequency = c / lambda), the
  bounds are the ones assumed, and the two log-probabilities agree at probe
  points (1e-9 relative; -inf outside the bounds on both sides);
* planckton's own statistics of its chain (dumped by the tool) against numpy
  and emcee: np.percentile of the chain equals the tool's quantile() values,
  emcee.autocorr.integrated_time of the chain equals the tool's
  autocorrelation times (1e-8 relative);
* the issue's tolerance: for every parameter the median and the 16th and
  84th percentiles of the two samplers agree within 0.1 sigma, sigma = half
  emcee's 16-84 range; and the chains are long enough for that to mean
  something (the Monte Carlo standard error of each difference, from the
  autocorrelation times, at most a third of the tolerance);
* acceptance fractions within 0.03 and autocorrelation times within 30 % of
  emcee's (the same algorithm; emcee shuffles the halves, planckton does not),
  both chains over 50 autocorrelation times long.

Source of every sampling check: python3-emcee 3.1.4 (Debian), numpy 1.24.
"""

import argparse
import json
import math
import os
import subprocess
import sys
import tempfile
import time

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import common  # noqa: E402

import emcee  # noqa: E402  python3-emcee (Debian)

EMCEE = "python3-emcee %s (Debian)" % emcee.__version__
SEED = 20260601            # numpy seed of the simulated data
EMCEE_SEED = 4242          # numpy seed of emcee's walkers
TOLERANCE_SIGMA = 0.1      # the tolerance for medians and 16/84 percentiles
PROBE_TOLERANCE = 1e-9     # relative, ln p of the two implementations
REFERENCE_FREQUENCY_HZ = 1e12  # nu_0 of the optically thin modified black body (core/science/model.h)
# Default bounds of core/science/model.cpp model_parameters, natural units.
TEMPERATURE_BOUNDS = (0.1, 1e9)
BETA_BOUNDS = (0.0, 5.0)
SAMPLER = {"walkers": 48, "steps": 6500, "burn_in": 500, "thin": 1, "seed": 7, "initial_spread": 1e-3}


def simulate(rng, lo_um, hi_um, n, relative_error, f_nu):
    um = np.geomspace(lo_um, hi_um, n)
    truth = f_nu(common.C / (um * 1e-6))
    y = truth * (1.0 + relative_error * rng.standard_normal(n))
    return um, y, relative_error * truth


def problems():
    rng = np.random.default_rng(SEED)
    planck_um, planck_y, planck_err = simulate(
        rng, 0.3, 3.0, 60, 0.02, lambda nu: 1e-17 * common.planck_b_nu_si(nu, 5000.0))
    dust_um, dust_y, dust_err = simulate(
        rng, 70.0, 850.0, 12, 0.05,
        lambda nu: 2e-9 * (nu / REFERENCE_FREQUENCY_HZ) ** 1.7 * common.planck_b_nu_si(nu, 20.0))
    return [
        {"name": "planck", "model": "planck", "labels": ["ln T", "ln S"],
         "truth": [math.log(5000.0), math.log(1e-17)],
         "x": common.as_list(planck_um), "x_unit": "um", "y": common.as_list(planck_y),
         "y_unit": "W/m2/Hz", "y_error": common.as_list(planck_err)},
        {"name": "modified_black_body", "model": "modified_black_body", "labels": ["ln T", "ln S", "beta"],
         "truth": [math.log(20.0), math.log(2e-9), 1.7],
         "x": common.as_list(dust_um), "x_unit": "um", "y": common.as_list(dust_y),
         "y_unit": "W/m2/Hz", "y_error": common.as_list(dust_err)},
    ]


def probes(problem):
    """Points of the solver's space: near the truth, and outside each bound."""
    truth = np.array(problem["truth"])
    points = [truth, truth + 0.01, truth - 0.02]
    outside = truth.copy()
    outside[0] = math.log(TEMPERATURE_BOUNDS[0]) - 0.01
    points.append(outside)
    outside = truth.copy()
    outside[0] = math.log(TEMPERATURE_BOUNDS[1]) + 0.01
    points.append(outside)
    if len(truth) == 3:
        for beta in (BETA_BOUNDS[0] - 1e-6, BETA_BOUNDS[1] + 1e-6, BETA_BOUNDS[0], 0.3):
            p = truth.copy()
            p[2] = beta
            points.append(p)
    return [common.as_list(p) for p in points]


class LogPosterior:
    """ln p(u) of the fit, vectorised over rows of u (emcee's vectorize=True)."""

    def __init__(self, frequency_hz, value, error, dust):
        self.nu = np.asarray(frequency_hz, dtype=float)
        self.y = np.asarray(value, dtype=float)
        self.sigma = np.asarray(error, dtype=float)
        self.dust = dust
        self.lever = np.log(self.nu / REFERENCE_FREQUENCY_HZ)

    def __call__(self, u):
        u = np.atleast_2d(np.asarray(u, dtype=float))
        temperature = np.exp(u[:, 0])[:, None]
        scale = np.exp(u[:, 1])[:, None]
        inside = (u[:, 0] >= math.log(TEMPERATURE_BOUNDS[0])) & (u[:, 0] <= math.log(TEMPERATURE_BOUNDS[1]))
        with np.errstate(over="ignore"):
            model = scale * 2.0 * common.H * self.nu ** 3 / common.C ** 2 / np.expm1(
                common.H * self.nu / (common.K_B * temperature))
        if self.dust:
            beta = u[:, 2]
            inside &= (beta >= BETA_BOUNDS[0]) & (beta <= BETA_BOUNDS[1])
            model = model * np.exp(beta[:, None] * self.lever)
        chi2 = np.sum(((self.y - model) / self.sigma) ** 2, axis=1)
        lnp = -0.5 * chi2
        lnp[~inside | ~np.isfinite(lnp)] = -np.inf
        return lnp


def run_tool(report, tool, request_path):
    proc = subprocess.run([tool, request_path], capture_output=True, text=True,
                          timeout=common.SUBPROCESS_TIMEOUT_S, stdin=subprocess.DEVNULL)
    report.check("planckton-posterior-values exit status", proc.returncode, 0, proc.returncode == 0)
    if proc.stderr.strip():
        report.info("tool stderr: " + proc.stderr.strip()[:500])
    try:
        return json.loads(proc.stdout)
    except json.JSONDecodeError as exc:
        report.check("tool output is JSON (%s)" % exc, "no", "yes", False)
        return None


def check_inputs(report, name, problem, out, dust):
    frequency = common.C / (np.array(problem["x"]) * 1e-6)
    report.check_max("%s: frequencies the fit saw = c / lambda (max relative difference)" % name,
                     np.max(np.abs(np.array(out["frequency_hz"]) / frequency - 1.0)), 1e-15)
    report.check("%s: values and errors the fit saw are the ones written" % name,
                 "same" if out["value_si"] == problem["y"] and out["error_si"] == problem["y_error"] else "differ",
                 "same", out["value_si"] == problem["y"] and out["error_si"] == problem["y_error"])
    expected_lower = [TEMPERATURE_BOUNDS[0], 0.0] + ([BETA_BOUNDS[0]] if dust else [])
    expected_upper = [TEMPERATURE_BOUNDS[1], None] + ([BETA_BOUNDS[1]] if dust else [])
    ok = out["natural_lower"] == expected_lower and out["natural_upper"] == expected_upper
    report.check("%s: bounds of %s are [%s] to [%s] (core/science/model.cpp)" % (
        name, out["parameters"], expected_lower, expected_upper),
        "%s to %s" % (out["natural_lower"], out["natural_upper"]), "as assumed", ok)
    report.check("%s: the fit converged" % name, out["fit"]["converged"], True, out["fit"]["converged"])


def check_probes(report, name, problem, out, log_posterior):
    worst = 0.0
    agree = True
    for point, theirs in zip(problem["probes"], out["probes"]):
        ours = float(log_posterior(np.array(point))[0])
        if theirs is None or not math.isfinite(ours):
            agree &= theirs is None and not math.isfinite(ours)
            continue
        worst = max(worst, abs(theirs - ours) / max(1.0, abs(ours)))
    report.check("%s: ln p at %d probes, planckton vs this script (-inf agree: %s; worst "
                 "difference relative to max(1, |ln p|))" % (name, len(problem["probes"]), agree),
                 worst, PROBE_TOLERANCE, agree and worst <= PROBE_TOLERANCE)


def check_own_statistics(report, name, chain, posterior, labels):
    """The tool's quantiles and tau, recomputed from its chain with numpy and emcee."""
    draws = chain.reshape(-1, chain.shape[2])
    same = True
    for j in range(chain.shape[2]):
        for key, q in (("median", 50), ("p16", 16), ("p84", 84)):
            same &= float(np.percentile(draws[:, j], q)) == posterior[key][j]
    report.check("%s: planckton's quantile() of its chain = np.percentile (numpy %s), bit for bit"
                 % (name, np.__version__), "same" if same else "differ", "same", same)
    tau = emcee.autocorr.integrated_time(chain, quiet=True)
    err = np.max(np.abs(np.array(posterior["tau"]) / tau - 1.0))
    report.check("%s: planckton's autocorrelation times %s = emcee.autocorr.integrated_time of its "
                 "chain (%s)" % (name, np.round(posterior["tau"], 2), EMCEE), err, 1e-8, err <= 1e-8)


def quantile_standard_error(q, effective_draws):
    """Monte Carlo standard error of a sample q-quantile, in sigmas, for a Gaussian:
    sqrt(q (1 - q) / n) / phi(z_q) (e.g. Stuart & Ord, Kendall's Advanced Theory of Statistics)."""
    from scipy.stats import norm
    return math.sqrt(q * (1.0 - q) / effective_draws) / norm.pdf(norm.ppf(q))


def run_emcee(log_posterior, start, scale, dimension):
    np.random.seed(EMCEE_SEED)  # emcee 3 takes its generator's state from numpy's global one
    walkers = SAMPLER["walkers"]
    p0 = np.empty((walkers, dimension))
    for k in range(walkers):
        while True:
            p0[k] = start + SAMPLER["initial_spread"] * scale * np.random.standard_normal(dimension)
            if np.isfinite(log_posterior(p0[k])[0]):
                break
    sampler = emcee.EnsembleSampler(walkers, dimension, log_posterior, vectorize=True)
    sampler.run_mcmc(p0, SAMPLER["steps"], progress=False)
    chain = sampler.get_chain(discard=SAMPLER["burn_in"], thin=SAMPLER["thin"])
    tau = sampler.get_autocorr_time(discard=SAMPLER["burn_in"], thin=SAMPLER["thin"], quiet=True)
    # Acceptance after the burn-in, as planckton counts it: accepted moves change the position.
    moved = np.any(np.diff(sampler.get_chain()[SAMPLER["burn_in"] - 1:], axis=0) != 0.0, axis=2)
    return chain, tau, float(np.mean(moved))


def compare(report, name, labels, posterior, chain, tau, acceptance, summary):
    draws = chain.reshape(-1, chain.shape[2])
    n_cpp = posterior["draws"] / max(posterior["tau"])
    n_emcee = draws.shape[0] / np.max(tau)
    for j, label in enumerate(labels):
        p16, p50, p84 = np.percentile(draws[:, j], [16, 50, 84])
        sigma = 0.5 * (p84 - p16)
        for key, ref, q in (("median", p50, 0.5), ("p16", p16, 0.16), ("p84", p84, 0.84)):
            diff = (posterior[key][j] - ref) / sigma
            summary.append((name, label, key, posterior[key][j], ref, diff))
            report.check("%s: %s %s, planckton %.8g vs emcee %.8g, |difference| in sigma (sigma = %.4g) (%s)"
                         % (name, label, key, posterior[key][j], ref, sigma, EMCEE),
                         abs(diff), TOLERANCE_SIGMA, abs(diff) <= TOLERANCE_SIGMA)
            resolution = math.hypot(quantile_standard_error(q, n_cpp), quantile_standard_error(q, n_emcee))
            report.check("%s: %s %s: Monte Carlo standard error of the difference (N_eff %.0f and %.0f), "
                         "in sigma, at most a third of the tolerance" % (name, label, key, n_cpp, n_emcee),
                         resolution, TOLERANCE_SIGMA / 3.0, resolution <= TOLERANCE_SIGMA / 3.0)
    report.check("%s: acceptance fraction, planckton %.4f vs emcee %.4f (%s)"
                 % (name, posterior["acceptance"], acceptance, EMCEE),
                 abs(posterior["acceptance"] - acceptance), 0.03, abs(posterior["acceptance"] - acceptance) <= 0.03)
    err = np.max(np.abs(np.array(posterior["tau"]) / tau - 1.0))
    report.check("%s: autocorrelation times, planckton %s vs emcee %s steps (%s)"
                 % (name, np.round(posterior["tau"], 2), np.round(tau, 2), EMCEE), err, 0.3, err <= 0.3)
    kept = posterior["kept_steps"] * SAMPLER["thin"]
    report.check("%s: planckton's chain is converged (kept steps %d > 50 tau, acceptance in (0.1, 0.9))"
                 % (name, kept), posterior["converged"], True, posterior["converged"] is True)
    report.check("%s: emcee's chain spans over 50 autocorrelation times" % name,
                 kept / np.max(tau), "> 50", kept > 50.0 * np.max(tau))


def body(report):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--values-tool", required=True)
    parser.add_argument("--keep", help="directory to keep the request and the chains in")
    args = parser.parse_args()
    if not common.require_executable(report, "values tool", args.values_tool):
        return
    report.info("%s from %s; numpy %s" % (EMCEE, emcee.__file__, np.__version__))
    with tempfile.TemporaryDirectory(prefix="planckton-posterior-") as tmp:
        folder = args.keep or tmp
        request = problems()
        for problem in request:
            problem["sampler"] = SAMPLER
            problem["probes"] = probes(problem)
            problem["chain_path"] = os.path.join(folder, "chain-%s.bin" % problem["name"])
        request_path = os.path.join(folder, "problems.json")
        with open(request_path, "w", encoding="utf-8") as fh:
            json.dump({"problems": request}, fh)
        started = time.monotonic()
        data = run_tool(report, args.values_tool, request_path)
        report.info("planckton-posterior-values: %.2f s" % (time.monotonic() - started))
        if data is None:
            return
        summary = []
        for problem, out in zip(request, data["problems"]):
            name, labels = problem["name"], problem["labels"]
            dust = problem["model"] == "modified_black_body"
            posterior = out["posterior"]
            report.info("%s: fit %s, sigma %s; planckton: %d draws, %d evaluations, %.3f s"
                        % (name, np.round(out["fit"]["internal"], 5), np.round(out["fit"]["sigma"], 5),
                           posterior["draws"], posterior["evaluations"], posterior["seconds"]))
            check_inputs(report, name, problem, out, dust)
            log_posterior = LogPosterior(out["frequency_hz"], out["value_si"], out["error_si"], dust)
            check_probes(report, name, problem, out, log_posterior)
            chain = np.fromfile(problem["chain_path"], dtype=np.float64)
            chain = chain.reshape(posterior["kept_steps"], posterior["walkers"], len(labels))
            check_own_statistics(report, name, chain, posterior, labels)
            started = time.monotonic()
            emcee_chain, tau, acceptance = run_emcee(
                log_posterior, np.array(out["fit"]["internal"]), np.array(out["fit"]["sigma"]), len(labels))
            report.info("%s: emcee %.2f s" % (name, time.monotonic() - started))
            compare(report, name, labels, posterior, emcee_chain, tau, acceptance, summary)
        report.info("summary (solver space): problem, parameter, statistic, planckton, emcee, difference in sigma")
        for row in summary:
            report.info("  %-20s %-6s %-6s %.8g  %.8g  %+.4f" % row)


if __name__ == "__main__":
    common.main_guard("Posterior sampling (Goodman & Weare ensemble) vs python3-emcee 3.1.4", body)

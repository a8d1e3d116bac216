"""The interval methods (options.intervals: covariance, profile, posterior) on POST /v1/fit end to end
against the real server: profile and posterior for a spectrum sample (tms-0112-cool-star) and a
photometry sample (bfc-7-dust-clump, a modified black body); a Rayleigh-Jeans-only spectrum, whose
temperature the profile gives as a one-sided lower limit (the 95 % interval's upper end null, a
lower_limit_only warning), and the same data with points around the peak, which close it; the
posterior reproducible (the same seed: the same bytes, over HTTP and from the CLI), different seeds
compatible, a thinned sample when asked, the sampler's figures sane; the table query parameters
intervals and seed; a batch line with intervals posterior; bad options answered 422 at their pointers
(and refused by the FitRequest schema where JSON Schema can say so); the OpenAPI example of a profile
fit. Every JSON answer is validated against openapi/openapi.yaml (JSON Schema Draft 2020-12).

Outside sources:
- The Rayleigh-Jeans data: B_lambda(8000 K) with the CODATA 2018 exact h, c, k at 30 points from 30
  to 300 um (h c / lambda k T <= 0.06: the Rayleigh-Jeans side, where the shape does not depend on T),
  2 % Gaussian errors from numpy's default_rng with a fixed seed (Debian python3-numpy).
- Coverage levels: the two-sided 68.27 / 95.45 % and one-sided 84.13 / 97.72 % of a normal
  distribution at 1 and 2 sigma, here from math.erf.
All requests go to the test server on 127.0.0.1; each posterior is kept short (steps 600, or the
defaults on a few points)."""
import copy
import json
import math
import os
import tempfile

import sys

sys.dont_write_bytecode = True  # no __pycache__ in the source tree
import numpy as np  # noqa: E402

import harness  # noqa: E402
from harness import Checks, OpenAPI, start_checked_server, check_problem, describe, http, is_response, json_of, media_type  # noqa: E402

args = harness.parse_args(__doc__)
checks = Checks(args.require_schema)
schema = OpenAPI(args.repo)
SAMPLES = os.path.join(args.repo, "sample-spectra")
FIT, BATCH = "/v1/fit", "/v1/fit/batch"
JSON_CT = {"Content-Type": "application/json"}
CSV_CT = {"Content-Type": "text/csv"}
NDJSON_CT = {"Content-Type": "application/x-ndjson"}

# CODATA 2018 exact SI values (h, c, k).
H, C, K = 6.62607015e-34, 299792458.0, 1.380649e-23
TRUE_T = 8000.0
SHORT = {"steps": 600}  # a short chain: 16 walkers x 600 steps, 150 of them burn-in (7,200 draws)


def phi(z):
    return 0.5 * (1.0 + math.erf(z / math.sqrt(2.0)))


TWO_SIDED = {"interval_68": phi(1) - phi(-1), "interval_95": phi(2) - phi(-2)}
ONE_SIDED = {"interval_68": phi(1), "interval_95": phi(2)}


def load(name):
    with open(os.path.join(SAMPLES, name), encoding="utf-8") as f:
        return json.load(f)


def with_options(document, **options):
    d = copy.deepcopy(document)
    d["options"] = {**d.get("options", {}), **options}
    return d


def post_json(server, document, headers=None):
    return http("POST", server, FIT, data=harness.compact(document), headers=dict(JSON_CT, **(headers or {})))


def fitted(label, r):
    """200 application/json, valid against the FitResponse schema; returns the document or None."""
    return harness.answer_json(checks, schema, label, r, FIT, "post")


def is_model_document(doc):
    """The model document: its parameters carry `fixed`, its solver has no start_temperature."""
    return all("fixed" in p for p in doc["parameters"].values()) and "start_temperature" not in doc.get("solver", {})


def estimates(doc):
    """(pointer, estimate) for every estimate of a response: parameters, peaks, derived, components, frames."""
    out = [(f"/parameters/{n}", p) for n, p in doc.get("parameters", {}).items()]
    out += [(f"/peaks/{n}", p) for n, p in doc.get("peaks", {}).items() if isinstance(p, dict)]
    out += [(f"/derived/{n}", p) for n, p in doc.get("derived", {}).items()]
    for i, c in enumerate(doc.get("components", [])):
        out += [(f"/components/{i}/{n}", p) for n, p in c.items() if isinstance(p, dict) and "value" in p]
        out += [(f"/components/{i}/peaks/{n}", p) for n, p in c.get("peaks", {}).items()]
    for frame in ("rest", "observed"):
        out += [(f"/frames/{frame}/temperatures/{n}", p)
                for n, p in doc.get("frames", {}).get(frame, {}).get("temperatures", {}).items()]
    return out


def free(doc):
    return [n for n, p in doc["parameters"].items() if not p.get("fixed")]


def codes(doc):
    return [w.get("code") for w in doc.get("warnings", [])]


def planck_lambda(lam_um, temperature, scale=1e-18):
    """scale * B_lambda(T) per um (W/m2/um for a solid angle `scale` in sr)."""
    lam = lam_um * 1e-6
    return scale * 2 * H * C * C / lam ** 5 / math.expm1(H * C / (lam * K * temperature)) * 1e-6


def rayleigh_jeans_request(with_peak=False, seed=4):
    """30 points of 8000 K from 30 to 300 um, 2 % errors (numpy default_rng(seed)); with_peak adds
    seven points from 0.25 to 1 um, around the peak of B_lambda (0.362 um).

    How far -2 ln p rises from the best fit to T -> infinity (a pure lambda^-4 law) decides whether the
    profile closes: 4.65 for noise-free data (just above the 95 % threshold of 4), so it depends on the
    draw. Seed 4 leaves a rise of 2.5 (best fit about 11,000 K; computed here beforehand on a grid of T
    with the scale in closed form): the 68 % interval closes, the 95 % one stays open above, each with a
    margin of about 1.5 in -2 ln p."""
    rng = np.random.default_rng(seed)
    lam = list(np.geomspace(30.0, 300.0, 30))
    if with_peak:
        lam = [0.25, 0.3, 0.36, 0.45, 0.6, 0.8, 1.0] + lam
    xs, ys, es = [], [], []
    for x in lam:
        b = planck_lambda(float(x), TRUE_T)
        xs.append(float(f"{x:.6g}"))
        ys.append(float(f"{b * (1.0 + 0.02 * rng.standard_normal()):.6e}"))
        es.append(float(f"{0.02 * b:.4e}"))
    return {"spectrum": {"x": xs, "x_unit": "um", "y": ys, "y_unit": "W/m2/um", "y_error": es}}


def spectrum_csv(request):
    s = request["spectrum"]
    return ("x,y,y_error\n" + "".join(f"{x!r},{y!r},{e!r}\n" for x, y, e in zip(s["x"], s["y"], s["y_error"]))).encode()


def cli_fit(document, extra=()):
    """The CLI's answer to a request document (written to a temporary file)."""
    with tempfile.NamedTemporaryFile("w", suffix=".json", delete=False) as f:
        json.dump(document, f)
        path = f.name
    try:
        return harness.run_cli(args.cli, ["fit", path, *extra])
    finally:
        os.unlink(path)


# ---- members every method shares ------------------------------------------------------------------------

def method_members(label, doc, method):
    intervals = doc.get("intervals", {})
    checks.check(f"{label}: the model document, intervals.method {method}",
                 is_model_document(doc) and intervals.get("method") == method, repr(intervals.get("method")))
    levels = intervals.get("levels", {})
    checks.check(f"{label}: intervals.levels are the two-sided 68.27 / 95.45 % of a normal (math.erf, 1e-12)",
                 all(abs(levels.get(k, 0) - v) < 1e-12 for k, v in TWO_SIDED.items()), repr(levels))
    medians = [p for p, e in estimates(doc) if "median" in e]
    sided = [p for p, e in estimates(doc) if "one_sided" in e]
    if method != "posterior":
        checks.check(f"{label}: no estimate has a median (posterior only)", not medians, repr(medians[:4]))
    if method != "profile":
        checks.check(f"{label}: no estimate is one-sided (profile only)", not sided, repr(sided[:4]))


def contains(interval, v):
    return isinstance(interval, list) and (interval[0] is None or interval[0] <= v) and (interval[1] is None or v <= interval[1])


def profile_members(label, doc):
    method_members(label, doc, "profile")
    iv = doc.get("intervals", {})
    checks.check(f"{label}: profile thresholds [1, 4], one-sided levels 84.13 / 97.72 % (math.erf, 1e-12), evaluations > 0",
                 iv.get("thresholds") == [1.0, 4.0]
                 and all(abs(iv.get("one_sided_levels", {}).get(k, 0) - v) < 1e-12 for k, v in ONE_SIDED.items())
                 and isinstance(iv.get("profile_evaluations"), int) and iv["profile_evaluations"] > 0,
                 repr({k: iv.get(k) for k in ("thresholds", "one_sided_levels", "profile_evaluations")}))
    bad = [n for n in free(doc) if not (contains(doc["parameters"][n]["interval_68"], doc["parameters"][n]["value"])
                                        and contains(doc["parameters"][n]["interval_95"], doc["parameters"][n]["value"]))]
    checks.check(f"{label}: each free parameter's profile intervals contain the best fit", not bad, repr(bad))


def posterior_members(label, doc, walkers=16, steps=600, burn_in=150, seed=None, prior="jeffreys"):
    method_members(label, doc, "posterior")
    iv = doc.get("intervals", {})
    names = free(doc)
    settings = {k: iv.get(k) for k in ("walkers", "steps", "burn_in")}
    checks.check(f"{label}: the sampler's settings are echoed (walkers {walkers}, steps {steps}, burn_in {burn_in}), "
                 f"draws = walkers x (steps - burn_in)",
                 settings == {"walkers": walkers, "steps": steps, "burn_in": burn_in}
                 and iv.get("draws") == walkers * (steps - burn_in), repr(dict(settings, draws=iv.get("draws"))))
    if seed is not None:
        checks.check(f"{label}: intervals.seed is {seed}", iv.get("seed") == seed, repr(iv.get("seed")))
    checks.check(f"{label}: the prior is stated (Jeffreys' unless asked)",
                 iv.get("prior") == prior and ("Jeffreys" in iv.get("prior_description", "")) == (prior == "jeffreys"),
                 repr((iv.get("prior"), iv.get("prior_description"))))
    acceptance = iv.get("acceptance_fraction")
    checks.check(f"{label}: acceptance fraction in (0.1, 0.9)", isinstance(acceptance, float) and 0.1 < acceptance < 0.9,
                 repr(acceptance))
    tau = iv.get("autocorrelation_time", {})
    checks.check(f"{label}: an autocorrelation time > 0 (and below the kept steps) for each free parameter {names}",
                 list(tau) == names and all(isinstance(t, float) and 0 < t < steps - burn_in for t in tau.values()),
                 repr(tau))
    checks.check(f"{label}: evaluations >= walkers x steps", isinstance(iv.get("evaluations"), int)
                 and iv["evaluations"] >= walkers * steps, repr(iv.get("evaluations")))
    converged = iv.get("converged")
    checks.check(f"{label}: a posterior_not_converged warning exactly when converged is false",
                 isinstance(converged, bool) and (("posterior_not_converged" in codes(doc)) == (not converged)),
                 f"converged {converged!r}, warnings {codes(doc)}")
    missing = [p for p, e in estimates(doc) if "median" not in e and not e.get("fixed")
               and not (p == "/derived/angular_radius" and doc.get("model") == "diluted_planck")]
    checks.check(f"{label}: every estimate of a free quantity has its median", not missing, repr(missing[:4]))
    outside = [n for n in names if not (doc["parameters"][n]["interval_68"][0] <= doc["parameters"][n]["median"]
                                        <= doc["parameters"][n]["interval_68"][1])]
    checks.check(f"{label}: each parameter's median lies inside its 68 % interval", not outside, repr(outside))


def sigma_of(p):
    return p["error"] if isinstance(p.get("error"), (int, float)) and p["error"] > 0 else math.nan


# ---- the samples -------------------------------------------------------------------------------------------

def spectrum_sample(server):
    star = load("tms-0112-cool-star.json")
    covariance = fitted("tms-0112 with intervals covariance (the default)", post_json(server, star))
    profile = fitted("tms-0112 with intervals profile", post_json(server, with_options(star, intervals="profile")))
    posterior = fitted("tms-0112 with intervals posterior (steps 600)",
                       post_json(server, with_options(star, intervals="posterior", seed=11, posterior=SHORT)))
    if covariance is not None:
        checks.check("tms-0112 with covariance intervals: the plain Planck document (a solver start temperature)",
                     "start_temperature" in covariance.get("solver", {}) and covariance["intervals"]["method"] == "covariance",
                     repr(covariance.get("solver")))
    if profile is not None:
        profile_members("tms-0112 profile", profile)
    if posterior is not None:
        posterior_members("tms-0112 posterior", posterior, seed=11)
    flat = fitted("tms-0112 with intervals posterior, prior flat",
                  post_json(server, with_options(star, intervals="posterior", seed=11, posterior=dict(SHORT, prior="flat"))))
    if flat is not None:
        posterior_members("tms-0112 posterior (flat)", flat, seed=11, prior="flat")
    if covariance is None:
        return
    t = covariance["parameters"]["temperature"]
    s = t["error"]
    # 824 points: the likelihood is nearly Gaussian in ln T, so the three methods agree.
    for label, doc, tolerance in (("profile", profile, 0.05), ("posterior", posterior, 0.25)):
        if doc is None:
            continue
        other = doc["parameters"]["temperature"]
        off = max(abs(a - b) for level in ("interval_68", "interval_95") for a, b in zip(other[level], t[level])) / s
        checks.check(f"tms-0112: the {label} temperature intervals agree with the covariance ones to {tolerance} sigma "
                     "(a nearly Gaussian likelihood)", off <= tolerance,
                     f"{label} {other['interval_68']}, covariance {t['interval_68']}: {off:.3f} sigma")
    if posterior is not None:
        median = posterior["parameters"]["temperature"]["median"]
        checks.check("tms-0112: the posterior median temperature is within 0.2 sigma of the best fit",
                     abs(median - t["value"]) <= 0.2 * s, f"median {median!r}, fit {t['value']!r} +- {s:.3g}")


def photometry_sample(server):
    clump = load("bfc-7-dust-clump.json")
    covariance = fitted("bfc-7 (modified black body) with covariance intervals", post_json(server, clump))
    profile = fitted("bfc-7 with intervals profile", post_json(server, with_options(clump, intervals="profile")))
    posterior = fitted("bfc-7 with intervals posterior (steps 600)",
                       post_json(server, with_options(clump, intervals="posterior", posterior=SHORT)))
    if profile is not None:
        profile_members("bfc-7 profile", profile)
        checks.check("bfc-7 profile: the bands are there (photometry), beta and the dust mass have closed intervals",
                     len(profile.get("bands", [])) == len(clump["photometry"])
                     and None not in profile["parameters"]["beta"]["interval_95"]
                     and None not in profile["derived"]["dust_mass"]["interval_95"], repr(profile["parameters"]["beta"]))
    if posterior is not None:
        posterior_members("bfc-7 posterior", posterior, seed=1)
        mass = posterior.get("derived", {}).get("dust_mass", {})
        checks.check("bfc-7 posterior: the dust mass has its median inside its 68 % interval",
                     contains(mass.get("interval_68"), mass.get("median", math.nan)), repr(mass)[:200])
    if covariance is not None and profile is not None and posterior is not None:
        base = covariance["parameters"]
        same = all(doc["parameters"][n]["value"] == base[n]["value"] for doc in (profile, posterior) for n in base)
        checks.check("bfc-7: value (the best fit) and error (linearised) are the same whatever the method",
                     same and all(doc["parameters"][n]["error"] == base[n]["error"] for doc in (profile, posterior)
                                  for n in base), repr({n: base[n]["value"] for n in base}))
        t = base["temperature"]
        for label, doc in (("profile", profile), ("posterior", posterior)):
            lo, hi = doc["parameters"]["temperature"]["interval_68"]
            checks.check(f"bfc-7: the {label} 68 % temperature interval is within 0.5 sigma of the covariance one at each end",
                         abs(lo - t["interval_68"][0]) <= 0.5 * t["error"] and abs(hi - t["interval_68"][1]) <= 0.5 * t["error"],
                         f"[{lo:.4g}, {hi:.4g}] vs [{t['interval_68'][0]:.4g}, {t['interval_68'][1]:.4g}]")


# ---- Rayleigh-Jeans data: a lower limit, closed by the peak -----------------------------------------------

def rayleigh_jeans(server):
    rj = rayleigh_jeans_request()
    covariance = fitted("Rayleigh-Jeans-only spectrum (8000 K, 30-300 um) with covariance intervals", post_json(server, rj))
    if covariance is not None:
        t = covariance["parameters"]["temperature"]
        checks.check("Rayleigh-Jeans only, covariance: the plain document, a closed interval (it cannot say otherwise)",
                     "start_temperature" in covariance["solver"] and None not in t["interval_95"] and "one_sided" not in t,
                     repr(t["interval_95"]))
    doc = fitted("Rayleigh-Jeans-only spectrum with intervals profile", post_json(server, with_options(rj, intervals="profile")))
    if doc is not None:
        profile_members("Rayleigh-Jeans profile", doc)
        t = doc["parameters"]["temperature"]
        lo, hi = t["interval_95"]
        checks.check("Rayleigh-Jeans profile: temperature one_sided lower_limit, interval_95 = [limit, null]",
                     t.get("one_sided") == "lower_limit" and isinstance(lo, float) and hi is None, repr(t)[:300])
        checks.check(f"Rayleigh-Jeans profile: the 97.72 % lower limit ({lo!r} K) lies below the true {TRUE_T:.0f} K "
                     "and below the best fit", isinstance(lo, float) and lo < TRUE_T and lo < t["value"], repr(lo))
        checks.check("Rayleigh-Jeans profile: a lower_limit_only warning naming the temperature",
                     any(w["code"] == "lower_limit_only" and w["message"].startswith("temperature")
                         for w in doc["warnings"]), repr(codes(doc)))
        checks.check("Rayleigh-Jeans profile: no upper_limit_only or unconstrained warning",
                     not {"upper_limit_only", "unconstrained"} & set(codes(doc)), repr(codes(doc)))
        code, cli_doc, err = cli_fit(with_options(rj, intervals="profile"))
        diff = harness.strict_diff(cli_doc, doc) if cli_doc is not None else f"exit {code}: {err.strip()[:200]}"
        checks.check("Rayleigh-Jeans profile: the CLI gives the same document, every number equal", diff is None, diff or "")
    peak = fitted("the same data with seven points around the peak (0.25-1 um), intervals profile",
                  post_json(server, with_options(rayleigh_jeans_request(with_peak=True), intervals="profile")))
    if peak is not None:
        profile_members("with the peak, profile", peak)
        t = peak["parameters"]["temperature"]
        checks.check("with the peak: a closed temperature interval, no one_sided, no lower_limit_only warning",
                     "one_sided" not in t and None not in t["interval_68"] + t["interval_95"]
                     and "lower_limit_only" not in codes(peak), repr(t["interval_95"]))
        checks.check(f"with the peak: the true {TRUE_T:.0f} K inside the 95 % interval, which spans less than 4 %",
                     contains(t["interval_95"], TRUE_T) and t["interval_95"][1] / t["interval_95"][0] < 1.04,
                     repr(t["interval_95"]))
    return rj


# ---- the posterior: reproducible, seeds, samples -----------------------------------------------------------

def reproducibility(server):
    star = load("tms-0112-cool-star.json")
    request = with_options(star, intervals="posterior", seed=42, posterior=SHORT)
    a = post_json(server, request)
    b = post_json(server, request)
    first, second = fitted("posterior, seed 42", a), fitted("posterior, seed 42 again", b)
    if first is None or second is None:
        return
    checks.check("the same seed twice: byte-identical parameters and peaks",
                 json.dumps(first["parameters"]) == json.dumps(second["parameters"])
                 and json.dumps(first["peaks"]) == json.dumps(second["peaks"]), "")
    checks.check("the same seed twice: byte-identical bodies", a.content == b.content, f"{len(a.content)} vs {len(b.content)} bytes")
    code, cli_doc, err = cli_fit(request)
    diff = harness.strict_diff(cli_doc, first) if cli_doc is not None else f"exit {code}: {err.strip()[:200]}"
    checks.check("posterior seed 42: the CLI (planckton fit FILE) gives the HTTP document, every number equal", diff is None,
                 diff or "")
    other = fitted("posterior, seed 43", post_json(server, with_options(star, intervals="posterior", seed=43, posterior=SHORT)))
    if other is None:
        return
    for name in free(first):
        p, q = first["parameters"][name], other["parameters"][name]
        s = sigma_of(p)
        checks.check(f"seeds 42 and 43: different {name} medians, within 0.2 sigma of each other",
                     p["median"] != q["median"] and abs(p["median"] - q["median"]) <= 0.2 * s,
                     f"{p['median']!r} vs {q['median']!r}: {abs(p['median'] - q['median']) / s:.3f} sigma")
    checks.check("seeds 42 and 43: intervals.seed echoes each", (first["intervals"]["seed"], other["intervals"]["seed"]) == (42, 43),
                 repr((first["intervals"]["seed"], other["intervals"]["seed"])))
    checks.check("without options.posterior.samples: no intervals.samples", "samples" not in first["intervals"],
                 repr(list(first["intervals"])))


def returned_samples(server):
    star = load("tms-0112-cool-star.json")
    for wanted in (50, 7):
        doc = fitted(f"posterior with samples {wanted}",
                     post_json(server, with_options(star, intervals="posterior", seed=5, posterior=dict(SHORT, samples=wanted))))
        if doc is None:
            continue
        s = doc["intervals"].get("samples")
        if not checks.check(f"samples {wanted}: intervals.samples is there", isinstance(s, dict), repr(list(doc["intervals"]))):
            continue
        draws = s.get("draws", [])
        names = free(doc)
        checks.check(f"samples {wanted}: 1 to {wanted} draws of the free parameters {names}, in their order",
                     s.get("parameters") == names and 0 < len(draws) <= wanted and all(len(d) == len(names) for d in draws),
                     f"{s.get('parameters')}, {len(draws)} draws")
        t = doc["parameters"]["temperature"]
        lo, hi = t["bounds"]
        column = [d[0] for d in draws]
        checks.check(f"samples {wanted}: the temperatures drawn are inside the bounds and within 6 sigma of the fit",
                     all(lo <= x <= hi and abs(x - t["value"]) <= 6 * t["error"] for x in column),
                     f"{min(column):.6g} .. {max(column):.6g}")
        if wanted == 50:
            median = float(np.median(column))
            # 50 draws, neighbours ~9 steps apart (tau ~ 20): the median of the thinned sample scatters by ~0.25 sigma.
            checks.check("samples 50: their median temperature is within 1 sigma of the reported median (numpy.median)",
                         abs(median - t["median"]) <= 1.0 * t["error"], f"{median!r} vs {t['median']!r}")


def posterior_defaults(server):
    """The default chain (16 walkers x 4000 steps, 500 of them burn-in, seed 1) on six bands."""
    clump = load("bfc-7-dust-clump.json")
    doc = fitted("bfc-7 with intervals posterior and no options.posterior (the defaults)",
                 post_json(server, with_options(clump, intervals="posterior")))
    if doc is not None:
        posterior_members("bfc-7 default posterior", doc, walkers=16, steps=4000, burn_in=500, seed=1)
    doc = fitted("bfc-7 with posterior.steps 400 only (burn_in a quarter of it)",
                 post_json(server, with_options(clump, intervals="posterior", posterior={"steps": 400, "walkers": 16})))
    if doc is not None:
        iv = doc["intervals"]
        checks.check("posterior steps 400, walkers 16: burn_in defaults to 100 (a quarter), draws 16 x 300",
                     (iv.get("walkers"), iv.get("steps"), iv.get("burn_in"), iv.get("draws")) == (16, 400, 100, 4800),
                     repr({k: iv.get(k) for k in ("walkers", "steps", "burn_in", "draws")}))
    plain = fitted("a plain planck request with intervals profile",
                   post_json(server, with_options(harness.planck_spectrum(40), intervals="profile")))
    if plain is not None:
        checks.check("a plain planck request with intervals profile is answered with the model document",
                     is_model_document(plain) and plain["model"] == "planck", repr(plain.get("solver")))


# ---- tables and batches ------------------------------------------------------------------------------------

def tables(server, rj):
    body = spectrum_csv(rj)
    units = [("x_unit", "um"), ("y_unit", "W/m2/um")]
    single = json_of(post_json(server, with_options(rj, intervals="profile")))
    doc = fitted("the Rayleigh-Jeans CSV with ?intervals=profile",
                 http("POST", server, FIT + "?" + harness.query(units + [("intervals", "profile")]), data=body, headers=CSV_CT))
    if doc is not None:
        diff = harness.strict_diff(doc, single)
        checks.check("?intervals=profile gives the JSON request's document (options.intervals profile)", diff is None, diff or "")
        checks.check("?intervals=profile: the temperature is a lower limit",
                     doc["parameters"]["temperature"].get("one_sided") == "lower_limit", repr(doc["parameters"]["temperature"])[:200])
    pairs = units + [("intervals", "posterior"), ("seed", "9")]
    doc = fitted("the Rayleigh-Jeans CSV with ?intervals=posterior&seed=9 (the default chain on 30 points)",
                 http("POST", server, FIT + "?" + harness.query(pairs), data=body, headers=CSV_CT))
    if doc is not None:
        same = json_of(post_json(server, with_options(rj, intervals="posterior", seed=9)))
        diff = harness.strict_diff(doc, same)
        checks.check("?intervals=posterior&seed=9 gives the JSON request's document (options.seed 9)", diff is None, diff or "")
        checks.check("?seed=9: intervals.seed 9, the default chain (16 x 4000, burn-in 500)",
                     [doc["intervals"].get(k) for k in ("seed", "walkers", "steps", "burn_in")] == [9, 16, 4000, 500],
                     repr({k: doc["intervals"].get(k) for k in ("seed", "walkers", "steps", "burn_in")}))
        with tempfile.NamedTemporaryFile("wb", suffix=".csv", delete=False) as f:
            f.write(body)
            path = f.name
        try:
            code, cli_doc, err = harness.run_cli(args.cli, ["fit", path, *harness.cli_flags(pairs)])
        finally:
            os.unlink(path)
        diff = harness.strict_diff(cli_doc, doc) if cli_doc is not None else f"exit {code}: {err.strip()[:200]}"
        checks.check("the CLI with --intervals posterior --seed 9 on the table gives the HTTP document", diff is None, diff or "")
    for name, extra, parameter in (("?intervals=bootstrap", [("intervals", "bootstrap")], "intervals"),
                                   ("?seed=3 without ?intervals=posterior", [("seed", "3")], "seed"),
                                   ("?intervals=profile&seed=3", [("intervals", "profile"), ("seed", "3")], "seed"),
                                   ("?intervals=posterior&seed=-1", [("intervals", "posterior"), ("seed", "-1")], "seed"),
                                   ("?intervals=posterior&seed=1.5", [("intervals", "posterior"), ("seed", "1.5")], "seed")):
        check_problem(checks, name, http("POST", server, FIT + "?" + harness.query(units + extra), data=body, headers=CSV_CT),
                      status=422, parameter=parameter, accepted=parameter == "intervals", schema=schema)


def batch(server):
    star, clump = load("tms-0112-cool-star.json"), load("bfc-7-dust-clump.json")
    lines = [{"id": "star-posterior", **with_options(star, intervals="posterior", seed=3, posterior=SHORT)},
             {"id": "clump-profile", **with_options(clump, intervals="profile")},
             {"id": "bad-walkers", **with_options(star, intervals="posterior", posterior={"walkers": 5})}]
    r = http("POST", server, BATCH, data=("\n".join(harness.compact(l) for l in lines) + "\n").encode(), headers=NDJSON_CT)
    ok = is_response(r) and r.status_code == 200 and media_type(r) == "application/x-ndjson"
    checks.check("a batch with intervals posterior and profile lines: 200 application/x-ndjson", ok, "" if ok else describe(r))
    if not ok:
        return
    answers = [json.loads(t) for t in r.text.splitlines() if t.strip()]
    summary = [(a.get("index"), a.get("id"), a.get("status")) for a in answers]
    checks.check("batch: one answer per line, in order, 200 200 422",
                 summary == [(0, "star-posterior", 200), (1, "clump-profile", 200), (2, "bad-walkers", 422)], repr(summary))
    for a, line in zip(answers, lines):
        schema.check(checks, f"batch line {a.get('id')}: matches the OpenAPI BatchLine schema", a, BATCH, "post", 200,
                     "application/x-ndjson")
        if a.get("status") == 200:
            single = json_of(post_json(server, line))
            diff = harness.strict_diff(a.get("response"), single)
            checks.check(f"batch line {a.get('id')}: the response is the POST /v1/fit document", diff is None, diff or "")
    if len(answers) == 3:
        p = answers[2].get("problem", {})
        checks.check("batch line bad-walkers: a problem at /options/posterior/walkers", p.get("pointer") == "/options/posterior/walkers",
                     repr(p)[:200])
        checks.check("batch line star-posterior: intervals.method posterior, seed 3",
                     answers[0].get("response", {}).get("intervals", {}).get("seed") == 3, "")


# ---- bad options ---------------------------------------------------------------------------------------------

def bad_options(server):
    star, clump = load("tms-0112-cool-star.json"), load("bfc-7-dust-clump.json")
    post = lambda **o: with_options(star, **o)  # noqa: E731
    cases = [
        # (name, document, pointer, accepted, JSON Schema can refuse it)
        ("seed without intervals posterior", post(seed=1), "/options/seed", False, True),
        ("seed with intervals profile", post(intervals="profile", seed=1), "/options/seed", False, True),
        ("options.posterior without intervals posterior", post(posterior={"steps": 100}), "/options/posterior", False, True),
        ("an unknown interval method", post(intervals="bootstrap"), "/options/intervals", True, True),
        ("a negative seed", post(intervals="posterior", seed=-1), "/options/seed", False, True),
        ("a seed that is not an integer", post(intervals="posterior", seed=1.5), "/options/seed", False, True),
        ("an odd number of walkers", post(intervals="posterior", posterior={"walkers": 33}), "/options/posterior/walkers",
         False, True),
        ("2 walkers (at least 4)", post(intervals="posterior", posterior={"walkers": 2}), "/options/posterior/walkers", False, True),
        ("4 walkers for 3 free parameters (at least twice as many)",
         with_options(clump, intervals="posterior", posterior={"walkers": 4}), "/options/posterior/walkers", False, False),
        ("burn_in = steps", post(intervals="posterior", posterior={"steps": 100, "burn_in": 100}),
         "/options/posterior/burn_in", False, False),
        ("burn_in > steps", post(intervals="posterior", posterior={"steps": 100, "burn_in": 500}),
         "/options/posterior/burn_in", False, False),
        ("walkers x steps above 1,000,000", post(intervals="posterior", posterior={"walkers": 256, "steps": 5000}),
         "/options/posterior/steps", False, False),
        ("walkers x steps x points above 3e8 (824 points)", post(intervals="posterior", posterior={"walkers": 256, "steps": 3900}),
         "/options/posterior", False, False),
        ("steps above 20,000", post(intervals="posterior", posterior={"walkers": 4, "steps": 20001}), "/options/posterior/steps",
         False, True),
        ("samples above 10,000", post(intervals="posterior", posterior={"samples": 10001}), "/options/posterior/samples",
         False, True),
        ("an unknown member of options.posterior", post(intervals="posterior", posterior={"thin": 2}),
         "/options/posterior/thin", False, True),
        ("an unknown prior", post(intervals="posterior", posterior={"prior": "uniform"}),
         "/options/posterior/prior", False, True),
    ]
    for name, document, pointer, accepted, refusable in cases:
        check_problem(checks, name, post_json(server, document), status=422, pointer=pointer, accepted=accepted, schema=schema)
        if refusable and schema.available:
            error = schema.validate(document, schema.component("FitRequest"))
            checks.check(f"the FitRequest schema refuses {name}", error is not None, "accepted" if error is None else "")
    r = post_json(server, with_options(star, intervals="posterior", seed=1, posterior=SHORT))
    checks.check("a good posterior request is answered 200 after the bad ones", is_response(r) and r.status_code == 200,
                 describe(r, 120))


# ---- the OpenAPI document ------------------------------------------------------------------------------------

def openapi_example(server):
    if not schema.available:
        checks.skip_schema("the OpenAPI profile examples", schema.problem)
        return
    examples = schema.doc["components"]["examples"]
    request = examples.get("RayleighJeansProfileRequest", {}).get("value")
    response = examples.get("RayleighJeansProfileResponse", {}).get("value")
    schema.check_component(checks, "the profile request example matches FitRequest", request, "FitRequest")
    schema.check_component(checks, "the profile response example matches FitResponse", response, "FitResponse")
    doc = fitted("the profile request example", post_json(server, request)) if request else None
    if doc is None or not isinstance(response, dict):
        return
    t, e = doc["parameters"]["temperature"], response["parameters"]["temperature"]

    def close(a, b, tolerance):
        return (a is None and b is None) or (isinstance(a, float) and isinstance(b, float) and abs(a / b - 1) <= tolerance)

    # Real output: the same members and warnings, the same fit (1e-9) and profile ends (1e-3: crossings are found to
    # ~1e-3 sigma, so a refinement of the search may move them that much).
    checks.check("the profile response example is what the service answers (members, warnings, T to 1e-9, ends to 1e-3)",
                 list(doc) == list(response) and codes(doc) == codes(response) and close(t["value"], e["value"], 1e-9)
                 and t.get("one_sided") == e.get("one_sided") == "lower_limit"
                 and all(close(a, b, 1e-3) for level in ("interval_68", "interval_95") for a, b in zip(t[level], e[level])),
                 f"T {t['value']!r} {t['interval_68']} {t['interval_95']} vs {e['value']!r} {e['interval_68']} {e['interval_95']}")
    served = http("GET", server, "/openapi.yaml")
    text = served.text if is_response(served) and served.status_code == 200 else ""
    checks.check("GET /openapi.yaml serves the interval schemas", "ProfileIntervals:" in text and "PosteriorIntervals:" in text,
                 describe(served, 80))


def main():
    server = start_checked_server(checks, schema, args.server)
    if server is None:
        return
    spectrum_sample(server)
    photometry_sample(server)
    rj = rayleigh_jeans(server)
    reproducibility(server)
    returned_samples(server)
    posterior_defaults(server)
    tables(server, rj)
    batch(server)
    bad_options(server)
    openapi_example(server)
    server.stop(checks)


harness.crash_guard(checks, main)

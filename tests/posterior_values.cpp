// planckton-posterior-values: a test tool that samples the posteriors of model fits with planckton's
// ensemble sampler (core/science/ensemble_sampler.h) for the reference check in
// tests/reference/test_posterior_emcee.py, which samples the same log-probability with
// python3-emcee. Argument: a JSON file written by that test,
//   {"problems": [{"name", "model": "planck" | "modified_black_body" (optically thin, nu_0 = 1e12 Hz),
//                  "x": [...], "x_unit", "y": [...], "y_unit", "y_error": [...],
//                  "sampler": {"walkers", "steps", "burn_in", "thin", "seed", "initial_spread"},
//                  "probes": [[u...], ...]        (points of the solver's space to evaluate ln p at),
//                  "chain_path": "..."}]}          (optional: where to write the kept draws)
// For each problem: prepare_spectrum, model_data, fit_model(data, spec, {}), ModelPosterior(data,
// fit, {}), then sample_ensemble from the fit with the fit's one-sigma errors as the scale. Writes
// one JSON document on standard output:
//   {"problems": [{"name", "parameters": [names], "frequency_hz", "value_si", "error_si" (the data
//    as the fit saw them), "natural_lower", "natural_upper" (the bounds used), "fit": {"converged",
//    "internal", "sigma"}, "probes": [ln p at each probe, null for -inf], "posterior": {"median",
//    "p16", "p84" (per free parameter, solver space), "acceptance", "tau", "converged", "draws",
//    "walkers", "kept_steps", "evaluations", "seconds"}}]}
// The chain file holds the kept draws as raw native doubles, step-major, then walker, then
// parameter (numpy: np.fromfile(path).reshape(kept_steps, walkers, dimension)).
#include <chrono>
#include <cmath>
#include <cstdio>
#include <exception>
#include <fstream>
#include <iostream>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "science/ensemble_sampler.h"
#include "science/model_fit.h"
#include "science/spectrum.h"

namespace {

using nlohmann::json;
using namespace planckton;

json finite_or_null(double value) { return std::isfinite(value) ? json(value) : json(nullptr); }

json solve(const json& problem) {
  SpectrumInput input;
  input.x = problem.at("x").get<std::vector<double>>();
  input.x_unit = problem.at("x_unit").get<std::string>();
  input.y = problem.at("y").get<std::vector<double>>();
  input.y_unit = problem.at("y_unit").get<std::string>();
  input.y_error = problem.at("y_error").get<std::vector<double>>();
  const MeasuredSpectrum spectrum = prepare_spectrum(input);
  const ModelData data = model_data(spectrum);

  ModelSpec spec;
  const std::string model = problem.at("model").get<std::string>();
  if (model == "modified_black_body") {
    spec.kind = ModelKind::kModifiedBlackBody;  // optically thin, nu_0 = 1e12 Hz (the defaults)
  } else if (model != "planck") {
    throw std::runtime_error("unknown model " + model);
  }
  const ModelFitOptions fit_options;
  const ModelFitResult fit = fit_model(data, spec, fit_options);
  const ModelPosterior posterior(data, fit, fit_options);

  json out;
  out["name"] = problem.at("name");
  out["frequency_hz"] = spectrum.frequency_hz;
  out["value_si"] = spectrum.value_si;
  out["error_si"] = spectrum.error_si;
  json names = json::array(), lower = json::array(), upper = json::array(), internal = json::array(),
       sigma = json::array();
  std::vector<double> scale;
  for (std::size_t p : fit.free) {
    const FittedParameter& fp = fit.parameters[p];
    names.push_back(fp.info.name);
    lower.push_back(finite_or_null(fp.lower));
    upper.push_back(finite_or_null(fp.upper));
    internal.push_back(fp.internal);
    sigma.push_back(finite_or_null(fp.internal_sigma.value_or(NAN)));
    scale.push_back(fp.internal_sigma.value_or(0.1));
  }
  out["parameters"] = names;
  out["natural_lower"] = lower;
  out["natural_upper"] = upper;
  out["fit"] = {{"converged", fit.converged}, {"internal", internal}, {"sigma", sigma}};

  json probes = json::array();
  for (const json& probe : problem.value("probes", json::array())) {
    const std::vector<double> u = probe.get<std::vector<double>>();
    if (u.size() != posterior.dimension()) throw std::runtime_error("a probe has the wrong dimension");
    probes.push_back(finite_or_null(posterior.log_probability(u.data())));
  }
  out["probes"] = probes;

  const json& s = problem.at("sampler");
  EnsembleSamplerOptions options;
  options.walkers = s.value("walkers", options.walkers);
  options.steps = s.value("steps", options.steps);
  options.burn_in = s.value("burn_in", options.burn_in);
  options.thin = s.value("thin", options.thin);
  options.seed = s.value("seed", options.seed);
  options.initial_spread = s.value("initial_spread", options.initial_spread);
  const auto begin = std::chrono::steady_clock::now();
  const EnsembleSamplerResult chain = sample_ensemble(
      [&posterior](const double* u) { return posterior.log_probability(u); }, posterior.at_fit(), scale, options);
  const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - begin).count();

  json median = json::array(), p16 = json::array(), p84 = json::array();
  std::vector<double> column(chain.draws());
  for (std::size_t j = 0; j < chain.dimension; ++j) {
    for (std::size_t i = 0; i < chain.draws(); ++i) column[i] = chain.samples[i * chain.dimension + j];
    median.push_back(quantile(column, 0.5));
    p16.push_back(quantile(column, 0.16));
    p84.push_back(quantile(column, 0.84));
  }
  json tau = json::array();
  for (double t : chain.autocorrelation_time) tau.push_back(finite_or_null(t));
  out["posterior"] = {{"median", median},
                      {"p16", p16},
                      {"p84", p84},
                      {"acceptance", chain.acceptance_fraction},
                      {"tau", tau},
                      {"converged", chain.converged},
                      {"draws", chain.draws()},
                      {"walkers", chain.walkers},
                      {"kept_steps", chain.draws() / chain.walkers},
                      {"evaluations", chain.evaluations},
                      {"seconds", seconds}};

  if (problem.contains("chain_path")) {
    std::ofstream file(problem.at("chain_path").get<std::string>(), std::ios::binary);
    file.write(reinterpret_cast<const char*>(chain.samples.data()),
               static_cast<std::streamsize>(chain.samples.size() * sizeof(double)));
    if (!file) throw std::runtime_error("cannot write the chain");
  }
  return out;
}

}  // namespace

int main(int argc, char** argv) {
  if (argc != 2) {
    std::fprintf(stderr, "usage: planckton-posterior-values PROBLEMS.json\n");
    return 2;
  }
  try {
    std::ifstream file(argv[1]);
    if (!file) throw std::runtime_error(std::string("cannot read ") + argv[1]);
    const json request = json::parse(file);
    json response;
    response["problems"] = json::array();
    for (const json& problem : request.at("problems")) response["problems"].push_back(solve(problem));
    std::cout << response.dump() << '\n';
  } catch (const std::exception& e) {
    std::fprintf(stderr, "planckton-posterior-values: %s\n", e.what());
    return 1;
  }
  return 0;
}

// SPDX-License-Identifier: MIT
#include "sigmatube/app/case_loader.h"

#include <cstdio>
#include <algorithm>
#include <cmath>

#include <fstream>
#include <iomanip>
#include <sstream>
#include <utility>

#include "sigmatube/app/work_estimate.h"
#include "sigmatube/casefile/case_reader.h"
#include "sigmatube/casefile/case_validation.h"
#include "sigmatube/core/sha256.h"
#include "sigmatube/expansion/surrogate.h"
#include "sigmatube/model/model_factory.h"
#include "sigmatube/model/plan.h"

namespace sigmatube::app {
namespace {

std::string read_bytes(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(SourceLocation{path, 0, ""}, "cannot open the case file");
  std::ostringstream bytes;
  bytes << in.rdbuf();
  return bytes.str();
}

const char* law_name(casefile::ControlLaw law) {
  switch (law) {
    case casefile::ControlLaw::lqr: return "lqr";
    case casefile::ControlLaw::gain: return "gain";
    case casefile::ControlLaw::open_loop: return "open-loop";
  }
  return "?";
}

const char* distribution_name(casefile::DistributionKind kind) {
  using K = casefile::DistributionKind;
  switch (kind) {
    case K::normal: return "normal";
    case K::uniform: return "uniform";
    case K::beta: return "beta";
    case K::gamma: return "gamma";
    case K::lognormal: return "lognormal";
    case K::truncated_normal: return "truncated-normal";
    case K::triangular: return "triangular";
    case K::gaussian_process: return "gaussian-process";
  }
  return "?";
}


std::string join(const std::vector<std::string>& names) {
  std::string out;
  for (const auto& n : names) out += (out.empty() ? "" : ", ") + n;
  return out;
}

// A constraint window must lie within the plan (a small relative slack for
// rounding), or `run` would find no report time in it.
void check_windows(const LoadedCase& loaded) {
  const double t0 = loaded.closed_loop->plan().start_time(), tf = loaded.closed_loop->plan().end_time();
  const double slack = 1e-9 * std::max(1.0, std::abs(tf - t0));
  for (const auto& c : loaded.options.constraints) {
    if (!c.window_in_seconds) continue;
    const auto [start, end] = *c.window_in_seconds;
    if (start < t0 - slack || end > tf + slack) {
      std::ostringstream message;
      message.precision(6);
      message << "window [" << start << ", " << end << "] s lies outside the plan, which runs from " << t0 << " to "
              << tf << " s";
      throw InputError(c.key_where.of("window", c.where), message.str());
    }
  }
}

}  // namespace

std::string inputs_manifest(const casefile::CaseOptions& options) {
  std::ostringstream m;
  m << "sigmatube inputs 1\n";
  m << "case " << sha256_hex(read_bytes(options.path)) << "\n";
  if (!options.plan.path.empty()) {
    std::ifstream in(options.plan.path, std::ios::binary);
    if (!in) throw InputError(options.plan.where, "cannot open the plan file '" + options.plan.path + "'");
    std::ostringstream bytes;
    bytes << in.rdbuf();
    m << "plan " << sha256_hex(bytes.str()) << "\n";
  }
  m << "montecarlo.runs " << options.montecarlo.runs << "\n";
  m << "surrogate.samples " << options.surrogate.samples << "\n";
  char value[40];
  for (const auto& c : options.constraints) {
    std::snprintf(value, sizeof value, "%.17g", c.max_probability);
    m << "constraint." << c.name << ".max_probability " << value << "\n";
  }
  return m.str();
}

LoadedCase load_case(const std::string& path) { return load_case(casefile::read_case(path)); }

LoadedCase load_case(casefile::CaseOptions options) {
  LoadedCase loaded;
  loaded.case_sha256 = sha256_hex(read_bytes(options.path));
  loaded.inputs_sha256 = sha256_hex(inputs_manifest(options));
  loaded.options = std::move(options);
  auto model = std::shared_ptr<const model::Model>(model::make_model(loaded.options.model));
  loaded.model = model;

  std::vector<std::string> outputs = model->state_names();
  for (const auto& name : model->derived_output_names()) outputs.push_back(name);
  for (const auto& name : model->input_names()) outputs.push_back("cmd." + name);
  casefile::validate_against_model(loaded.options, model->state_names(), model->input_names(),
                                   model->parameter_names(), outputs);

  loaded.closed_loop = std::make_unique<model::ClosedLoop>(model, loaded.options);
  loaded.germ = std::make_unique<germ::Germ>(
      germ::Germ::build(loaded.options.uncertain, germ::targets_of(*loaded.closed_loop)));
  for (const auto& options : loaded.options.constraints)
    loaded.constraints.emplace_back(options, loaded.closed_loop->output_names());
  // A design the options cannot support is a user error too: find out now.
  if (loaded.germ->dimension() > 0) (void)expansion::planned_model_runs(loaded.germ->specs(), loaded.options.surrogate);
  check_windows(loaded);
  enforce_limits(loaded, estimate_work(loaded));
  return loaded;
}

std::string describe_case(const LoadedCase& loaded) {
  const auto& o = loaded.options;
  const auto& m = *loaded.model;
  const auto& cl = *loaded.closed_loop;
  std::ostringstream out;
  out << "case        " << o.path << "\n";
  if (!o.title.empty()) out << "title       " << o.title << "\n";
  out << "model       " << m.name() << ": " << m.state_count() << " states (" << join(m.state_names()) << "), "
      << m.input_count() << " inputs (" << join(m.input_names()) << ")";
  if (m.parameter_count() > 0) {
    out << ", parameters ";
    const Eigen::VectorXd p = m.parameters();
    for (int i = 0; i < m.parameter_count(); ++i)
      out << (i ? ", " : "") << m.parameter_names()[static_cast<std::size_t>(i)] << " = " << p[i];
  }
  out << "\n";
  out << "outputs     " << cl.output_count() << " (" << join(cl.output_names()) << ")\n";
  out << "plan        " << o.plan.file << ": " << cl.plan().times().size() << " rows, t = " << cl.plan().start_time()
      << " … " << cl.plan().end_time() << " s, "
      << (o.plan.interpolation == casefile::Interpolation::cubic ? "cubic" : "linear") << " interpolation\n";
  out << "controller  " << law_name(o.control.law);
  if (o.control.law == casefile::ControlLaw::lqr) out << (o.control.time_varying ? " (time-varying)" : " (time-invariant)");
  if (!o.control.limits.empty()) {
    out << ", limits ";
    for (std::size_t i = 0; i < o.control.limits.size(); ++i)
      out << (i ? ", " : "") << o.control.limits[i].input << " in [" << o.control.limits[i].low << ", "
          << o.control.limits[i].high << "]";
  }
  out << "\n";
  out << "integrator  " << (o.simulation.integrator == casefile::IntegratorKind::dopri5 ? "dopri5" : "rk4")
      << ", step " << o.simulation.step_in_seconds << " s, " << cl.report_times().size() << " report times\n";
  out << "uncertain   " << o.uncertain.size() << " inputs\n";
  for (const auto& u : o.uncertain)
    out << "  " << std::left << std::setw(22) << u.name << " " << std::setw(17) << distribution_name(u.distribution)
        << " -> " << join(u.applies_to) << "\n";
  const auto& g = *loaded.germ;
  out << "germ        dimension " << g.dimension();
  if (g.dimension() > 0) out << " (" << join(g.names()) << ")";
  out << "\n";
  for (const auto& kl : g.karhunen_loeve())
    out << "  " << kl.input_name << ": " << kl.modes << " Karhunen-Loeve modes capture "
        << std::setprecision(4) << 100.0 * kl.captured_variance_fraction << " % of the variance\n";
  out << std::setprecision(6);
  out << "constraints " << loaded.constraints.size() << "\n";
  for (const auto& c : o.constraints) {
    out << "  " << std::left << std::setw(22) << c.name << " " << std::setw(17) << constraints::kind_name(c.type)
        << " P(violation) <= " << c.max_probability << " (" << (c.scope == casefile::ConstraintScope::path ? "path" : "pointwise");
    if (c.window_in_seconds) out << ", window " << c.window_in_seconds->first << " … " << c.window_in_seconds->second << " s";
    out << ")\n";
  }
  const bool refines = o.surrogate.adaptive || expansion::is_dimension_adaptive(o.surrogate.method);
  out << "surrogate   " << expansion::method_name(o.surrogate.method);
  if (o.surrogate.method == casefile::SurrogateMethod::sparse_grid) out << ", level " << o.surrogate.level;
  else if (!expansion::is_dimension_adaptive(o.surrogate.method)) out << ", degree " << o.surrogate.degree;
  if (refines) out << " (adaptive to tolerance " << o.surrogate.tolerance << ", at most "
                   << o.surrogate.max_model_runs << " runs)";
  out << "\n";
  const int runs = g.dimension() > 0 ? expansion::planned_model_runs(g.specs(), o.surrogate) : 1;
  out << "model runs  " << runs << " for the surrogate design"
      << (refines ? " (first step; adaptive refinement may add more)" : "") << ", "
      << o.montecarlo.runs << " for the Monte Carlo cross-check\n";
  out << describe_work(estimate_work(loaded));
  return out.str();
}

}  // namespace sigmatube::app

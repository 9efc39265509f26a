// SPDX-License-Identifier: MIT
// The Python module `sigmatube` (docs/python.md): run a case, read and write
// result files, and look at every number of a result as NumPy arrays. Arrays
// of the result's own storage are read-only views that keep the result alive
// (no copy); three-dimensional blocks (Sobol indices, coefficients, kept Monte
// Carlo runs) are stored per time and are copied into one array.
#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "sigmatube/app/analysis.h"
#include "sigmatube/app/case_loader.h"
#include "sigmatube/app/stored_surrogate.h"
#include "sigmatube/core/error.h"
#include "sigmatube/result/analysis_result.h"
#include "sigmatube/result/result_file.h"

namespace py = pybind11;
using sigmatube::result::AnalysisResult;

namespace {

using Shared = std::shared_ptr<const AnalysisResult>;

// A capsule that owns one reference to the result: the base of every view.
py::capsule owner(const Shared& result) {
  return py::capsule(new Shared(result), [](void* p) { delete static_cast<Shared*>(p); });
}

py::array read_only(py::array a) {
  a.attr("flags").attr("writeable") = false;
  return a;
}

py::array view(const Shared& r, const std::vector<double>& v) {
  return read_only(py::array_t<double>({static_cast<py::ssize_t>(v.size())}, {sizeof(double)}, v.data(), owner(r)));
}

py::array view(const Shared& r, const Eigen::VectorXd& v) {
  return read_only(py::array_t<double>({static_cast<py::ssize_t>(v.size())}, {sizeof(double)}, v.data(), owner(r)));
}

// Column-major Eigen matrix [rows, cols] as a NumPy array of that shape.
py::array view(const Shared& r, const Eigen::MatrixXd& m) {
  return read_only(py::array_t<double>({static_cast<py::ssize_t>(m.rows()), static_cast<py::ssize_t>(m.cols())},
                                       {static_cast<py::ssize_t>(sizeof(double)),
                                        static_cast<py::ssize_t>(sizeof(double) * m.rows())},
                                       m.data(), owner(r)));
}

// Cube: T matrices [rows, cols] → one array [T, rows, cols] (a copy).
py::array stack(const sigmatube::result::Cube& cube) {
  const py::ssize_t T = static_cast<py::ssize_t>(cube.size());
  const py::ssize_t rows = T ? cube[0].rows() : 0, cols = T ? cube[0].cols() : 0;
  py::array_t<double> out({T, rows, cols});
  auto a = out.mutable_unchecked<3>();
  for (py::ssize_t t = 0; t < T; ++t) {
    const Eigen::MatrixXd& m = cube[static_cast<std::size_t>(t)];
    if (m.rows() != rows || m.cols() != cols) throw std::runtime_error("stored block sizes differ between times");
    for (py::ssize_t i = 0; i < rows; ++i)
      for (py::ssize_t j = 0; j < cols; ++j) a(t, i, j) = m(i, j);
  }
  return out;
}

py::tuple pair(const double v[2]) { return py::make_tuple(v[0], v[1]); }

struct Result {
  Shared r;
};
struct SurrogateView {
  Shared r;
  std::shared_ptr<const sigmatube::expansion::Surrogate> expansion;  // built on first evaluate()
};
struct ConstraintView {
  Shared r;
  std::size_t k;
  const sigmatube::result::ConstraintResult& c() const { return r->constraints[k]; }
};
struct ConstraintMonteCarloView {
  Shared r;
  std::size_t k;
  const sigmatube::result::MonteCarloConstraint& m() const { return r->constraints[k].montecarlo; }
};
struct MonteCarloView {
  Shared r;
};

Result run_case(const std::string& case_path, int threads, std::optional<unsigned long long> seed,
                std::optional<long long> mc_runs, std::optional<long long> samples) {
  if (threads < 0) throw sigmatube::InputError(sigmatube::SourceLocation{"", 0, "threads"}, "must be ≥ 0");
  if (mc_runs && *mc_runs < 0) throw sigmatube::InputError(sigmatube::SourceLocation{"", 0, "mc_runs"}, "must be ≥ 0");
  if (samples && *samples < 1) throw sigmatube::InputError(sigmatube::SourceLocation{"", 0, "samples"}, "must be ≥ 1");
  sigmatube::app::AnalysisOptions options;
  options.threads = threads;
  options.seed = seed;
  options.mc_runs = mc_runs;
  options.samples = samples;
  options.progress = false;
  py::gil_scoped_release release;
  const sigmatube::app::LoadedCase loaded = sigmatube::app::load_case(case_path);
  return Result{std::make_shared<const AnalysisResult>(sigmatube::app::analyze_case(loaded, options))};
}

Result simulate_case(const std::string& case_path) {
  py::gil_scoped_release release;
  const sigmatube::app::LoadedCase loaded = sigmatube::app::load_case(case_path);
  return Result{std::make_shared<const AnalysisResult>(sigmatube::app::simulate_case(loaded))};
}

Result load_result(const std::string& path) {
  py::gil_scoped_release release;
  return Result{std::make_shared<const AnalysisResult>(sigmatube::result::read_result_file(path))};
}

}  // namespace

PYBIND11_MODULE(sigmatube, m) {
  m.doc() = "Closed-loop trajectory uncertainty analysis: polynomial chaos surrogate, violation probabilities, "
            "margins and a full-model Monte Carlo cross-check (docs/python.md). Risk numbers can hurt: read "
            "docs/cautions.md; they do not replace applicable safety standards, regulations or licensed authority.";
  m.attr("__version__") = SIGMATUBE_VERSION;
  static py::exception<sigmatube::InputError> input_error(m, "InputError", PyExc_ValueError);
  static py::exception<sigmatube::NumericalError> numerical_error(m, "NumericalError", PyExc_RuntimeError);
  py::register_exception_translator([](std::exception_ptr p) {
    try {
      if (p) std::rethrow_exception(p);
    } catch (const sigmatube::InputError& e) {
      input_error(e.what());
    } catch (const sigmatube::NumericalError& e) {
      numerical_error(e.what());
    }
  });

  py::class_<ConstraintMonteCarloView>(m, "ConstraintMonteCarlo", "Monte Carlo estimates of one constraint.")
      .def_property_readonly("path_probability", [](const ConstraintMonteCarloView& v) { return v.m().path_probability; })
      .def_property_readonly("path_violations", [](const ConstraintMonteCarloView& v) { return v.m().path_violations; })
      .def_property_readonly("path_interval", [](const ConstraintMonteCarloView& v) { return pair(v.m().path_interval); },
                             "Clopper–Pearson interval at montecarlo.confidence")
      .def_property_readonly("pointwise_probability",
                             [](const ConstraintMonteCarloView& v) { return view(v.r, v.m().pointwise_probability); });

  py::class_<ConstraintView>(m, "Constraint", "Results of one constraint (surrogate estimates unless noted).")
      .def_property_readonly("name", [](const ConstraintView& v) { return v.c().name; })
      .def_property_readonly("type", [](const ConstraintView& v) { return v.c().type; })
      .def_property_readonly("scope", [](const ConstraintView& v) { return v.c().scope; })
      .def_property_readonly("max_probability", [](const ConstraintView& v) { return v.c().max_probability; })
      .def_property_readonly("window", [](const ConstraintView& v) { return pair(v.c().window); })
      .def_property_readonly("path_probability", [](const ConstraintView& v) { return v.c().path_probability; })
      .def_property_readonly("path_standard_error", [](const ConstraintView& v) { return v.c().path_standard_error; })
      .def_property_readonly("pointwise_probability",
                             [](const ConstraintView& v) { return view(v.r, v.c().pointwise_probability); })
      .def_property_readonly("pointwise_standard_error",
                             [](const ConstraintView& v) { return view(v.r, v.c().pointwise_standard_error); })
      .def_property_readonly("clearance_mean", [](const ConstraintView& v) { return view(v.r, v.c().clearance_mean); })
      .def_property_readonly("clearance_std", [](const ConstraintView& v) { return view(v.r, v.c().clearance_std); })
      .def_property_readonly("clearance_quantile",
                             [](const ConstraintView& v) { return view(v.r, v.c().clearance_quantile); })
      .def_property_readonly("worst_pointwise_probability",
                             [](const ConstraintView& v) { return v.c().worst_pointwise_probability; })
      .def_property_readonly("worst_time", [](const ConstraintView& v) { return v.c().worst_time; })
      .def_property_readonly("margin", [](const ConstraintView& v) { return v.c().margin; })
      .def_property_readonly("required_backoff", [](const ConstraintView& v) { return v.c().required_backoff; })
      .def_property_readonly("tolerable_radius", [](const ConstraintView& v) { return v.c().tolerable_radius; })
      .def_property_readonly("verdict", [](const ConstraintView& v) { return v.c().verdict; })
      .def_property_readonly("within_bound", [](const ConstraintView& v) { return v.c().within_bound; })
      .def_property_readonly("agreement", [](const ConstraintView& v) { return v.c().agreement; })
      .def_property_readonly("montecarlo",
                             [](const ConstraintView& v) -> py::object {
                               if (!v.c().has_montecarlo) return py::none();
                               return py::cast(ConstraintMonteCarloView{v.r, v.k});
                             })
      .def("__repr__", [](const ConstraintView& v) { return "<sigmatube.Constraint " + v.c().name + ": " + v.c().verdict + ">"; });

  py::class_<SurrogateView>(m, "Surrogate", "The polynomial chaos surrogate of every (time, output).")
      .def_property_readonly("done", [](const SurrogateView& v) { return v.r->surrogate.done; })
      .def_property_readonly("method", [](const SurrogateView& v) { return v.r->surrogate.method; })
      .def_property_readonly("germ_names", [](const SurrogateView& v) { return v.r->surrogate.germ_names; })
      .def_property_readonly("germ_families", [](const SurrogateView& v) { return v.r->surrogate.germ_families; })
      .def_property_readonly("mean", [](const SurrogateView& v) { return view(v.r, v.r->surrogate.mean); }, "[T, n_out]")
      .def_property_readonly("std", [](const SurrogateView& v) { return view(v.r, v.r->surrogate.std); }, "[T, n_out]")
      .def_property_readonly("sobol_first", [](const SurrogateView& v) { return stack(v.r->surrogate.sobol_first); },
                             "[T, n_out, d] (a copy)")
      .def_property_readonly("sobol_total", [](const SurrogateView& v) { return stack(v.r->surrogate.sobol_total); },
                             "[T, n_out, d] (a copy)")
      .def_property_readonly("coefficients", [](const SurrogateView& v) { return stack(v.r->surrogate.coefficients); },
                             "[T, n_out, P] (a copy)")
      .def_property_readonly("multi_indices",
                             [](const SurrogateView& v) {
                               const auto& a = v.r->surrogate.multi_indices;
                               return read_only(py::array_t<int>(
                                   {static_cast<py::ssize_t>(a.rows()), static_cast<py::ssize_t>(a.cols())},
                                   {static_cast<py::ssize_t>(sizeof(int) * a.cols()), static_cast<py::ssize_t>(sizeof(int))},
                                   a.data(), owner(v.r)));
                             }, "[P, d]")
      .def_property_readonly("model_runs", [](const SurrogateView& v) { return v.r->surrogate.model_runs; })
      .def_property_readonly("samples", [](const SurrogateView& v) { return v.r->surrogate.samples; })
      .def_property_readonly("error_estimate", [](const SurrogateView& v) { return view(v.r, v.r->surrogate.error_estimate); })
      .def_property_readonly("notes", [](const SurrogateView& v) { return v.r->surrogate.notes; })
      .def(
          "evaluate",
          [](SurrogateView& v, py::array_t<double, py::array::c_style | py::array::forcecast> xi) {
            if (!v.expansion) v.expansion = std::make_shared<const sigmatube::expansion::Surrogate>(sigmatube::app::stored_surrogate(*v.r));
            const auto& s = *v.expansion;
            const py::ssize_t d = s.dimension();
            if (xi.ndim() != 1 && xi.ndim() != 2)
              throw sigmatube::InputError("germ points must be an array [N, d] (or [d] for one point), got " +
                                          std::to_string(xi.ndim()) + " dimensions");
            const bool single = xi.ndim() == 1;
            const py::ssize_t N = single ? 1 : xi.shape(0), cols = single ? xi.shape(0) : xi.shape(1);
            if (cols != d)
              throw sigmatube::InputError("germ points have " + std::to_string(cols) + " coordinates, the surrogate has " +
                                          std::to_string(d) + " germ dimensions");
            Eigen::MatrixXd points = Eigen::Map<const Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>>(
                xi.data(), N, d);
            Eigen::MatrixXd values;
            {
              py::gil_scoped_release release;
              values = sigmatube::app::evaluate_stored_surrogate(s, points);  // [N, T·n_out]
            }
            const py::ssize_t T = s.n_times, n_out = s.n_outputs;
            py::array_t<double> out(single ? std::vector<py::ssize_t>{T, n_out} : std::vector<py::ssize_t>{N, T, n_out});
            double* o = out.mutable_data();
            for (py::ssize_t i = 0; i < N; ++i)
              for (py::ssize_t c = 0; c < T * n_out; ++c) o[i * T * n_out + c] = values(i, c);
            return out;
          },
          py::arg("xi"),
          "Surrogate outputs at germ points xi ([N, d], or [d] for one point; germ space, i.e. the families' "
          "standardized variables): [N, T, n_out] (or [T, n_out]).");

  py::class_<MonteCarloView>(m, "MonteCarlo", "The full-model Monte Carlo cross-check.")
      .def_property_readonly("done", [](const MonteCarloView& v) { return v.r->montecarlo.done; })
      .def_property_readonly("runs", [](const MonteCarloView& v) { return v.r->montecarlo.runs; })
      .def_property_readonly("failed_runs", [](const MonteCarloView& v) { return v.r->montecarlo.failed_runs; })
      .def_property_readonly("failure_messages", [](const MonteCarloView& v) { return v.r->montecarlo.failure_messages; })
      .def_property_readonly("confidence", [](const MonteCarloView& v) { return v.r->montecarlo.confidence; })
      .def_property_readonly("seed", [](const MonteCarloView& v) { return v.r->montecarlo.seed; })
      .def_property_readonly("mean", [](const MonteCarloView& v) { return view(v.r, v.r->montecarlo.mean); })
      .def_property_readonly("std", [](const MonteCarloView& v) { return view(v.r, v.r->montecarlo.std); })
      .def_property_readonly("mean_standard_error",
                             [](const MonteCarloView& v) { return view(v.r, v.r->montecarlo.mean_standard_error); })
      .def_property_readonly("std_standard_error",
                             [](const MonteCarloView& v) { return view(v.r, v.r->montecarlo.std_standard_error); })
      .def_property_readonly("validation_rmse", [](const MonteCarloView& v) { return view(v.r, v.r->montecarlo.validation_rmse); })
      .def_property_readonly("validation_relative_rmse",
                             [](const MonteCarloView& v) { return view(v.r, v.r->montecarlo.validation_relative_rmse); })
      .def_property_readonly("sample_outputs", [](const MonteCarloView& v) { return stack(v.r->montecarlo.sample_outputs); },
                             "[K, T, n_out], the kept runs (a copy)")
      .def_property_readonly("joint_path_probability", [](const MonteCarloView& v) { return v.r->montecarlo.joint_path_probability; })
      .def_property_readonly("joint_path_interval", [](const MonteCarloView& v) { return pair(v.r->montecarlo.joint_path_interval); })
      .def_property_readonly("agreement", [](const MonteCarloView& v) { return v.r->montecarlo.agreement; })
      .def_property_readonly("agreement_cause", [](const MonteCarloView& v) { return v.r->montecarlo.agreement_cause; });

  py::class_<Result>(m, "Result", "Everything one analysis produced (the contents of a result file).")
      .def_property_readonly("time", [](const Result& v) { return view(v.r, v.r->time); }, "[T] report times [s]")
      .def_property_readonly("output_names", [](const Result& v) { return v.r->output_names; })
      .def_property_readonly("nominal", [](const Result& v) { return view(v.r, v.r->nominal_outputs); },
                             "[T, n_out] nominal run")
      .def_property_readonly("surrogate", [](const Result& v) { return SurrogateView{v.r, nullptr}; })
      .def_property_readonly("montecarlo", [](const Result& v) { return MonteCarloView{v.r}; })
      .def_property_readonly("constraints",
                             [](const Result& v) {
                               py::dict out;
                               for (std::size_t k = 0; k < v.r->constraints.size(); ++k)
                                 out[py::str(v.r->constraints[k].name)] = ConstraintView{v.r, k};
                               return out;
                             }, "dict: constraint name → Constraint, in case-file order")
      .def_property_readonly("title", [](const Result& v) { return v.r->title; })
      .def_property_readonly("case_path", [](const Result& v) { return v.r->case_path; })
      .def_property_readonly("case_sha256", [](const Result& v) { return v.r->case_sha256; })
      .def_property_readonly("tool_version", [](const Result& v) { return v.r->tool_version; })
      .def_property_readonly("created_utc", [](const Result& v) { return v.r->created_utc; })
      .def_property_readonly("seed", [](const Result& v) { return v.r->seed; })
      .def_property_readonly("command", [](const Result& v) { return v.r->command; })
      .def_property_readonly("exit_code", [](const Result& v) { return v.r->verdict_exit_code(); },
                             "what `sigmatube run` would exit with: 0 within bounds, 1 a bound exceeded, 3 disagreement")
      .def(
          "save",
          [](const Result& v, const std::string& path, bool force) {
            py::gil_scoped_release release;
            sigmatube::result::check_output_path(path, force);
            sigmatube::result::write_result_file(*v.r, path, force);
          },
          py::arg("path"), py::arg("force") = false,
          "Writes the result file (HDF5); an existing file only with force=True.")
      .def("__repr__", [](const Result& v) {
        return "<sigmatube.Result '" + v.r->title + "': " + std::to_string(v.r->time.size()) + " times, " +
               std::to_string(v.r->output_names.size()) + " outputs, " + std::to_string(v.r->constraints.size()) +
               " constraints>";
      });

  m.def("run", &run_case, py::arg("case_path"), py::arg("threads") = 0, py::arg("seed") = py::none(),
        py::arg("mc_runs") = py::none(), py::arg("samples") = py::none(),
        "The whole analysis of a case file, as `sigmatube run` (threads 0 = all cores; seed, mc_runs and samples "
        "override the case file). Raises sigmatube.InputError (a ValueError) with the command line's one-line "
        "message for bad input, sigmatube.NumericalError when a run fails.");
  m.def("simulate", &simulate_case, py::arg("case_path"), "The nominal closed-loop run only, as `sigmatube simulate`.");
  m.def("load", &load_result, py::arg("path"), "Reads a result file into a Result.");
}

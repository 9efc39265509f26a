// SPDX-License-Identifier: MIT
#include "sigmatube/app/stored_surrogate.h"

#include <stdexcept>

#include "sigmatube/core/error.h"
#include "sigmatube/germ/family.h"

namespace sigmatube::app {

expansion::Surrogate stored_surrogate(const result::AnalysisResult& r) {
  const SourceLocation where{r.case_path, 0, "surrogate"};
  const result::SurrogateResult& s = r.surrogate;
  if (!s.done) throw InputError(where, "the result has no surrogate (it was written by 'simulate')");
  expansion::Surrogate out;
  for (const auto& name : s.germ_families) {
    try {
      out.families.push_back(germ::family_from_string(name));
    } catch (const std::invalid_argument& error) {
      throw InputError(where, error.what());
    }
  }
  const auto T = static_cast<Eigen::Index>(r.time.size());
  const auto n_out = static_cast<Eigen::Index>(r.output_names.size());
  const Eigen::Index P = s.multi_indices.rows();
  if (s.multi_indices.cols() != static_cast<Eigen::Index>(out.families.size()) || P < 1)
    throw InputError(where, "multi-indices [" + std::to_string(P) + ", " + std::to_string(s.multi_indices.cols()) +
                                "] do not match " + std::to_string(out.families.size()) + " germ dimensions");
  if (static_cast<Eigen::Index>(s.coefficients.size()) != T)
    throw InputError(where, "coefficients for " + std::to_string(s.coefficients.size()) + " times, the result has " +
                                std::to_string(T));
  out.indices = s.multi_indices;
  out.n_times = static_cast<int>(T);
  out.n_outputs = static_cast<int>(n_out);
  out.coefficients.resize(P, T * n_out);
  for (Eigen::Index t = 0; t < T; ++t) {
    const Eigen::MatrixXd& c = s.coefficients[static_cast<std::size_t>(t)];  // [n_out, P]
    if (c.rows() != n_out || c.cols() != P)
      throw InputError(where, "coefficients at time index " + std::to_string(t) + " are [" + std::to_string(c.rows()) +
                                  ", " + std::to_string(c.cols()) + "], expected [" + std::to_string(n_out) + ", " +
                                  std::to_string(P) + "]");
    out.coefficients.middleCols(t * n_out, n_out) = c.transpose();
  }
  return out;
}

Eigen::MatrixXd evaluate_stored_surrogate(const expansion::Surrogate& surrogate, const Eigen::MatrixXd& xi) {
  if (xi.cols() != surrogate.dimension())
    throw InputError("germ points have " + std::to_string(xi.cols()) + " columns, the surrogate has " +
                     std::to_string(surrogate.dimension()) + " germ dimensions");
  Eigen::MatrixXd values;
  surrogate.evaluate(xi, values);
  return values;
}

}  // namespace sigmatube::app

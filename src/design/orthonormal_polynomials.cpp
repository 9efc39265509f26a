// SPDX-License-Identifier: MIT
#include "sigmatube/design/orthonormal_polynomials.h"

#include <cmath>
#include <sstream>
#include <stdexcept>

#include "sigmatube/core/error.h"

namespace sigmatube::design {
namespace {

void check_exponents(const germ::FamilySpec& spec) {
  const bool bad = (spec.family == germ::Family::jacobi && (!(spec.a > -1.0) || !(spec.b > -1.0))) ||
                   (spec.family == germ::Family::laguerre && !(spec.a > -1.0));
  if (bad) {
    std::ostringstream message;
    message << "family " << germ::to_string(spec) << " needs exponents > -1";
    throw InputError(SourceLocation{"", 0, "uncertain"}, message.str());
  }
}

}  // namespace

RecurrenceCoefficients recurrence_coefficients(const germ::FamilySpec& spec, int n) {
  if (n < 0) throw std::logic_error("recurrence_coefficients: negative count");
  check_exponents(spec);
  RecurrenceCoefficients r;
  r.alpha.assign(n, 0.0);
  r.beta.assign(n, 0.0);
  const double a = spec.a, b = spec.b;
  for (int k = 0; k < n; ++k) {
    const double kk = k;
    double alpha = 0.0, beta = 1.0;
    switch (spec.family) {
      case germ::Family::hermite:
        beta = k == 0 ? 1.0 : kk;
        break;
      case germ::Family::legendre:
        beta = k == 0 ? 1.0 : kk * kk / (4.0 * kk * kk - 1.0);
        break;
      case germ::Family::jacobi: {
        const double s = 2.0 * kk + a + b;
        // k = 0 and k = 1 are written out: the general forms divide 0/0 when a + b ∈ {0, −1}.
        if (k == 0) {
          alpha = (b - a) / (a + b + 2.0);
          beta = 1.0;
        } else {
          alpha = (b * b - a * a) / (s * (s + 2.0));
          if (k == 1)
            beta = 4.0 * (1.0 + a) * (1.0 + b) / ((2.0 + a + b) * (2.0 + a + b) * (3.0 + a + b));
          else
            beta = 4.0 * kk * (kk + a) * (kk + b) * (kk + a + b) / (s * s * (s + 1.0) * (s - 1.0));
        }
        break;
      }
      case germ::Family::laguerre:
        alpha = 2.0 * kk + a + 1.0;
        beta = k == 0 ? 1.0 : kk * (kk + a);
        break;
    }
    r.alpha[k] = alpha;
    r.beta[k] = beta;
  }
  return r;
}

OrthonormalPolynomials::OrthonormalPolynomials(const germ::FamilySpec& spec, int max_degree)
    : spec_(spec), max_degree_(max_degree) {
  if (max_degree < 0) throw std::logic_error("OrthonormalPolynomials: negative degree");
  const RecurrenceCoefficients r = recurrence_coefficients(spec, max_degree + 1);
  alpha_ = r.alpha;
  sqrt_beta_.resize(r.beta.size());
  for (std::size_t k = 0; k < r.beta.size(); ++k) sqrt_beta_[k] = std::sqrt(r.beta[k]);
}

void OrthonormalPolynomials::evaluate(const Eigen::Ref<const Eigen::VectorXd>& x,
                                      Eigen::Ref<Eigen::MatrixXd> values) const {
  if (values.rows() != x.size() || values.cols() != max_degree_ + 1)
    throw std::logic_error("OrthonormalPolynomials::evaluate: output has the wrong shape");
  values.col(0).setOnes();
  if (max_degree_ == 0) return;
  values.col(1) = (x.array() - alpha_[0]) / sqrt_beta_[1];
  for (int k = 1; k < max_degree_; ++k) {
    values.col(k + 1) =
        ((x.array() - alpha_[k]) * values.col(k).array() - sqrt_beta_[k] * values.col(k - 1).array()) /
        sqrt_beta_[k + 1];
  }
}

void OrthonormalPolynomials::value_and_derivative(int n, double x, double& value, double& derivative) const {
  if (n < 0 || n > max_degree_) throw std::logic_error("value_and_derivative: degree out of range");
  double p_prev = 0.0, p = 1.0, d_prev = 0.0, d = 0.0;
  for (int k = 0; k < n; ++k) {
    const double sb_prev = k == 0 ? 0.0 : sqrt_beta_[k];
    const double p_next = ((x - alpha_[k]) * p - sb_prev * p_prev) / sqrt_beta_[k + 1];
    const double d_next = (p + (x - alpha_[k]) * d - sb_prev * d_prev) / sqrt_beta_[k + 1];
    p_prev = p;
    p = p_next;
    d_prev = d;
    d = d_next;
  }
  value = p;
  derivative = d;
}

}  // namespace sigmatube::design

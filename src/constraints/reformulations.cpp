// SPDX-License-Identifier: MIT
#include "sigmatube/constraints/reformulations.h"

#include <boost/math/distributions/normal.hpp>
#include <cmath>
#include <sstream>
#include <stdexcept>

namespace sigmatube::constraints {
namespace {
void check_epsilon(double epsilon) {
  if (!(epsilon > 0.0 && epsilon < 1.0)) throw std::logic_error("reformulations: epsilon must lie in (0, 1)");
}
std::vector<std::uint8_t> check(const Eigen::VectorXd& mean, const Eigen::VectorXd& std, double factor) {
  if (mean.size() != std.size()) throw std::logic_error("reformulations: mean and std differ in size");
  std::vector<std::uint8_t> ok(static_cast<std::size_t>(mean.size()));
  for (Eigen::Index t = 0; t < mean.size(); ++t) ok[static_cast<std::size_t>(t)] = (mean[t] - factor * std[t] >= 0.0) ? 1 : 0;
  return ok;
}
}  // namespace

double gaussian_backoff_factor(double epsilon) {
  check_epsilon(epsilon);
  const boost::math::normal_distribution<double> standard(0.0, 1.0);
  return boost::math::quantile(boost::math::complement(standard, epsilon));
}

double cantelli_backoff_factor(double epsilon) {
  check_epsilon(epsilon);
  return std::sqrt((1.0 - epsilon) / epsilon);
}

std::vector<std::uint8_t> gaussian_check(const Eigen::VectorXd& mean, const Eigen::VectorXd& std, double epsilon) {
  return check(mean, std, gaussian_backoff_factor(epsilon));
}

std::vector<std::uint8_t> cantelli_check(const Eigen::VectorXd& mean, const Eigen::VectorXd& std, double epsilon) {
  return check(mean, std, cantelli_backoff_factor(epsilon));
}

std::string ReformulationDisagreement::describe() const {
  std::ostringstream out;
  out << "t = " << time_in_seconds << " s: ";
  switch (kind) {
    case Kind::gaussian_optimistic:
      out << "the Gaussian reformulation says the bound holds but the sampled probability is " << sampled_probability;
      break;
    case Kind::gaussian_pessimistic:
      out << "the Gaussian reformulation says the bound fails but the sampled probability is only " << sampled_probability;
      break;
    case Kind::cantelli_optimistic:
      out << "Cantelli's bound says the bound holds but the sampled probability is " << sampled_probability
          << " (sampling noise or inconsistent moments)";
      break;
  }
  return out.str();
}

std::vector<ReformulationDisagreement> find_reformulation_disagreements(
    const Eigen::VectorXd& times, const std::vector<std::uint8_t>& gaussian_ok,
    const std::vector<std::uint8_t>& cantelli_ok, const Eigen::VectorXd& sampled, double epsilon) {
  const std::size_t T = static_cast<std::size_t>(times.size());
  if (gaussian_ok.size() != T || cantelli_ok.size() != T || static_cast<std::size_t>(sampled.size()) != T) {
    throw std::logic_error("find_reformulation_disagreements: sizes differ");
  }
  std::vector<ReformulationDisagreement> out;
  for (std::size_t t = 0; t < T; ++t) {
    const double p = sampled[static_cast<Eigen::Index>(t)];
    if (std::isnan(p)) continue;
    const bool exceeds = p > epsilon;
    auto add = [&](ReformulationDisagreement::Kind kind) {
      out.push_back({kind, static_cast<int>(t), times[static_cast<Eigen::Index>(t)], p});
    };
    if (gaussian_ok[t] && exceeds) add(ReformulationDisagreement::Kind::gaussian_optimistic);
    if (!gaussian_ok[t] && !exceeds) add(ReformulationDisagreement::Kind::gaussian_pessimistic);
    if (cantelli_ok[t] && exceeds) add(ReformulationDisagreement::Kind::cantelli_optimistic);
  }
  return out;
}

std::string reformulation_note(const std::vector<ReformulationDisagreement>& found) {
  if (found.empty()) return "";
  int gaussian_optimistic = 0, gaussian_pessimistic = 0, cantelli_optimistic = 0;
  for (const auto& d : found) {
    switch (d.kind) {
      case ReformulationDisagreement::Kind::gaussian_optimistic: ++gaussian_optimistic; break;
      case ReformulationDisagreement::Kind::gaussian_pessimistic: ++gaussian_pessimistic; break;
      case ReformulationDisagreement::Kind::cantelli_optimistic: ++cantelli_optimistic; break;
    }
  }
  std::ostringstream out;
  out << found.front().describe();
  if (found.size() > 1) {
    out << " (" << found.size() << " report times in all: ";
    out << gaussian_optimistic << " Gaussian optimistic, " << gaussian_pessimistic << " Gaussian pessimistic, "
        << cantelli_optimistic << " Cantelli optimistic)";
  }
  return out.str();
}

}  // namespace sigmatube::constraints

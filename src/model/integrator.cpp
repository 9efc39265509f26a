// SPDX-License-Identifier: MIT
#include "sigmatube/model/integrator.h"

#include <algorithm>
#include <atomic>
#include <iostream>
#include <cmath>
#include <sstream>

#include "sigmatube/core/error.h"
#include "dopri5_tableau.h"

namespace sigmatube::model {
using namespace dopri5;

OdeIntegrator::OdeIntegrator(const casefile::SimulationOptions& options, int dimension)
    : options_(options), n_(dimension) {
  if (!(options.step_in_seconds > 0.0) || !std::isfinite(options.step_in_seconds))
    throw InputError(SourceLocation{options.where.file, options.where.line, "simulation.step"}, "must be a positive number of seconds");
  if (options.integrator == casefile::IntegratorKind::dopri5 && (!(options.rtol > 0.0) || !(options.atol > 0.0)))
    throw InputError(SourceLocation{options.where.file, options.where.line, "simulation.rtol"}, "rtol and atol must be > 0");
  for (auto* v : {&k1_, &k2_, &k3_, &k4_, &k5_, &k6_, &k7_, &y_, &ynew_, &err_, &dense_, &r1_, &r2_, &r3_, &r4_, &r5_})
    v->resize(n_);
}

void OdeIntegrator::warn_stiff(double t, double plan_length, double h, double expected_steps, const double* x) const {
  static std::atomic<bool> warned{false};
  if (warned.exchange(true)) return;
  std::ostringstream message;
  message.precision(4);
  message << "sigmatube: warning: " << (sample_ < 0 ? std::string("the nominal run") : "run " + std::to_string(sample_))
          << " needs far more integration steps than the plan suggests: " << accepted_ + rejected_ << " steps by t = "
          << t << " s of a " << plan_length << " s plan (about " << std::ceil(expected_steps)
          << " at the largest step), step now " << h << " s; stiff dynamics? (dopri5 is explicit) state:";
  for (int i = 0; i < std::min(n_, 8); ++i)
    message << ' '
            << (names_ && static_cast<int>(names_->size()) > i ? (*names_)[static_cast<std::size_t>(i)]
                                                                : std::to_string(i))
            << " = " << x[i];
  if (n_ > 8) message << " …";
  std::cerr << message.str() << '\n';
}

void OdeIntegrator::check_state(double t, const double* x) const {
  for (int i = 0; i < n_; ++i) {
    if (!std::isfinite(x[i]) || std::abs(x[i]) > kDivergenceBound) {
      std::ostringstream message;
      message << "the run diverged: state '"
              << (names_ && static_cast<int>(names_->size()) > i ? (*names_)[static_cast<std::size_t>(i)]
                                                                  : std::to_string(i))
              << "' = " << x[i];
      throw NumericalError(message.str(), sample_, t);
    }
  }
}

void OdeIntegrator::integrate(const Rhs& f, const std::vector<double>& report_times, double* x,
                              const Observer& observe, long long sample, const std::vector<std::string>* state_names) {
  if (report_times.empty()) throw std::logic_error("OdeIntegrator::integrate: no report times");
  for (std::size_t k = 1; k < report_times.size(); ++k)
    if (!(report_times[k] > report_times[k - 1])) throw std::logic_error("OdeIntegrator: report times must increase");
  sample_ = sample;
  names_ = state_names;
  accepted_ = rejected_ = evaluations_ = 0;
  check_state(report_times.front(), x);
  observe(0, report_times.front(), x);
  if (report_times.size() == 1) return;
  if (options_.integrator == casefile::IntegratorKind::rk4) integrate_rk4(f, report_times, x, observe);
  else integrate_dopri5(f, report_times, x, observe);
}

void OdeIntegrator::integrate_rk4(const Rhs& f, const std::vector<double>& times, double* x, const Observer& observe) {
  Eigen::Map<Eigen::VectorXd> state(x, n_);
  for (std::size_t k = 1; k < times.size(); ++k) {
    const double span = times[k] - times[k - 1];
    // Relative slack so a span that is a whole multiple of the step is not split once more by rounding.
    // Computed in floating point first: a tiny step must not overflow the count.
    const double wanted = std::ceil(span / options_.step_in_seconds - 1e-9);
    if (!(wanted <= kMaxStepsPerSpan))
    {
      std::ostringstream message;
      message.precision(3);
      message << "a step of " << options_.step_in_seconds << " s needs more than " << kMaxStepsPerSpan
              << " steps between report times";
      throw InputError(SourceLocation{options_.where.file, options_.where.line, "simulation.step"}, message.str());
    }
    const long long pieces = std::max(1LL, static_cast<long long>(wanted));
    const double h = span / static_cast<double>(pieces);
    for (long long s = 0; s < pieces; ++s) {
      const double t = times[k - 1] + static_cast<double>(s) * h;
      f(t, x, k1_.data());
      y_ = state + 0.5 * h * k1_;
      f(t + 0.5 * h, y_.data(), k2_.data());
      y_ = state + 0.5 * h * k2_;
      f(t + 0.5 * h, y_.data(), k3_.data());
      y_ = state + h * k3_;
      f(t + h, y_.data(), k4_.data());
      state += h / 6.0 * (k1_ + 2.0 * k2_ + 2.0 * k3_ + k4_);
      evaluations_ += 4;
      ++accepted_;
      check_state(s + 1 == pieces ? times[k] : t + h, x);
    }
    observe(k, times[k], x);
  }
}

void OdeIntegrator::integrate_dopri5(const Rhs& f, const std::vector<double>& times, double* x,
                                     const Observer& observe) {
  const double t0 = times.front(), tf = times.back();
  const double hmax = options_.step_in_seconds;
  const double rtol = options_.rtol, atol = options_.atol;
  const double hmin = kMinimumStepShare * (tf - t0);
  const double expo1 = kExpo1;

  Eigen::Map<Eigen::VectorXd> y(x, n_);
  double t = t0;
  f(t, x, k1_.data());
  ++evaluations_;

  auto scaled_norm = [&](const Eigen::VectorXd& v, const Eigen::VectorXd& reference) {
    double sum = 0.0;
    for (int i = 0; i < n_; ++i) {
      const double sc = atol + rtol * std::abs(reference(i));
      sum += (v(i) / sc) * (v(i) / sc);
    }
    return std::sqrt(sum / n_);
  };

  // Initial step (Hairer, Nørsett & Wanner, §II.4, "starting step size").
  double h;
  {
    const double dnf = scaled_norm(k1_, y);
    const double dny = scaled_norm(y, y);
    double h0 = (dnf <= 1e-10 || dny <= 1e-10) ? 1e-6 : 0.01 * dny / dnf;
    h0 = std::min(h0, hmax);
    ynew_ = y + h0 * k1_;
    f(t + h0, ynew_.data(), k2_.data());
    ++evaluations_;
    const double der2 = scaled_norm(k2_ - k1_, y) / h0;
    const double der12 = std::max(std::abs(der2), std::sqrt(dnf));
    const double h1 = der12 <= 1e-15 ? std::max(1e-6, std::abs(h0) * 1e-3) : std::pow(0.01 / der12, 0.2);
    h = std::min({100.0 * h0, h1, hmax});
  }

  // Stiffness watchdog: far more steps than the plan's length at the largest
  // step suggests means stiff dynamics for an explicit method; said once.
  const double expected_steps = (tf - t0) / hmax;
  const double watchdog_steps = std::max(kWatchdogMinimumSteps, kWatchdogFactor * expected_steps);
  bool watchdog_checked = false;

  std::size_t next = 1;  // next report time index
  double fac_old = 1e-4;
  bool last_rejected = false;
  while (next < times.size()) {
    bool final_step = false;
    // Stretch the last step by up to 1% (Hairer's DOPRI5 does the same) so that
    // rounding in t never leaves a sliver step before tf, but never beyond hmax.
    if (tf - t <= 1.01 * h && tf - t <= hmax * (1.0 + 1e-9)) {
      h = tf - t;
      final_step = true;
    }
    if (!final_step && h < hmin) {
      std::ostringstream message;
      int worst = 0;
      for (int i = 1; i < n_; ++i)
        if (!(std::abs(y(i)) <= std::abs(y(worst)))) worst = i;
      message << "the run diverged: step size " << h << " s fell below " << hmin
              << " s (stiff or singular dynamics); largest state '"
              << (names_ && static_cast<int>(names_->size()) > worst ? (*names_)[static_cast<std::size_t>(worst)]
                                                                      : std::to_string(worst))
              << "' = " << y(worst);
      throw NumericalError(message.str(), sample_, t);
    }
    if (!watchdog_checked && static_cast<double>(accepted_ + rejected_) > watchdog_steps) {
      watchdog_checked = true;
      warn_stiff(t, tf - t0, h, expected_steps, y.data());
    }
    f(t + c2 * h, (y_ = y + h * a21 * k1_).data(), k2_.data());
    f(t + c3 * h, (y_ = y + h * (a31 * k1_ + a32 * k2_)).data(), k3_.data());
    f(t + c4 * h, (y_ = y + h * (a41 * k1_ + a42 * k2_ + a43 * k3_)).data(), k4_.data());
    f(t + c5 * h, (y_ = y + h * (a51 * k1_ + a52 * k2_ + a53 * k3_ + a54 * k4_)).data(), k5_.data());
    f(t + h, (y_ = y + h * (a61 * k1_ + a62 * k2_ + a63 * k3_ + a64 * k4_ + a65 * k5_)).data(), k6_.data());
    ynew_ = y + h * (a71 * k1_ + a73 * k3_ + a74 * k4_ + a75 * k5_ + a76 * k6_);
    const double tnew = final_step ? tf : t + h;
    f(tnew, ynew_.data(), k7_.data());
    evaluations_ += 6;
    err_ = h * (e1 * k1_ + e3 * k3_ + e4 * k4_ + e5 * k5_ + e6 * k6_ + e7 * k7_);
    double err = 0.0;
    for (int i = 0; i < n_; ++i) {
      const double sc = atol + rtol * std::max(std::abs(y(i)), std::abs(ynew_(i)));
      err += (err_(i) / sc) * (err_(i) / sc);
    }
    err = std::sqrt(err / n_);
    if (!std::isfinite(err)) {
      // A stage left the finite numbers: shrink hard, the divergence check catches a true blow-up.
      // (A NaN step, from a right-hand side that is NaN at the start, counts as tiny.)
      if (!ynew_.allFinite() && !(h > hmin * 10.0)) check_state(tnew, ynew_.data());
      h *= 0.1;
      last_rejected = true;
      ++rejected_;
      continue;
    }
    const double fac11 = std::pow(err, expo1);
    if (err <= 1.0) {
      // Accepted: dense output before y is overwritten.
      const double hs = tnew - t;
      r1_ = y;
      r2_ = ynew_ - y;
      r3_ = hs * k1_ - r2_;
      r4_ = r2_ - hs * k7_ - r3_;
      r5_ = hs * (d1 * k1_ + d3 * k3_ + d4 * k4_ + d5 * k5_ + d6 * k6_ + d7 * k7_);
      const double t_old = t;
      ++accepted_;
      check_state(tnew, ynew_.data());
      while (next < times.size() && times[next] <= tnew) {
        if (times[next] == tnew) {
          observe(next, tnew, ynew_.data());
        } else {
          const double theta = (times[next] - t_old) / hs, theta1 = 1.0 - theta;
          dense_ = r1_ + theta * (r2_ + theta1 * (r3_ + theta * (r4_ + theta1 * r5_)));
          observe(next, times[next], dense_.data());
        }
        ++next;
      }
      y = ynew_;
      k1_ = k7_;  // first same as last
      t = tnew;
      double fac = fac11 / std::pow(fac_old, kBeta) / kSafety;
      fac = std::clamp(fac, 1.0 / kFacMax, 1.0 / kFacMin);
      double hnew = h / fac;
      if (last_rejected) hnew = std::min(hnew, h);
      fac_old = std::max(err, 1e-4);
      last_rejected = false;
      h = std::min(hnew, hmax);
      if (final_step) break;
    } else {
      h /= std::min(1.0 / kFacMin, fac11 / kSafety);
      last_rejected = true;
      ++rejected_;
    }
  }
  // Report times beyond the last step can only be tf itself, observed above.
}

}  // namespace sigmatube::model

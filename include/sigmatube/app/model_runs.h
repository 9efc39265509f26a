// SPDX-License-Identifier: MIT
#pragma once
// Many model runs of a loaded case at once, the way the pipeline makes them:
// spread over MPI ranks and threads (core/distributed.h; every rank receives
// every row) and propagated in batches (model/batch_propagator.h) where the
// integrator allows, one run at a time otherwise. Used for the surrogate's design
// runs and the Monte Carlo runs alike.
#include <cstddef>
#include <cstdint>

#include <Eigen/Dense>

#include "sigmatube/app/case_loader.h"
#include "sigmatube/model/batch_propagator.h"
#include "sigmatube/montecarlo/monte_carlo.h"

// Layer app/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::app {

class ModelRunner {
 public:
  /// Runs per batch and per work item of the rank/thread split.
  static constexpr std::size_t kDefaultBlock = 64;

  explicit ModelRunner(const LoadedCase& loaded);

  /// Runs germ point i (row i of `points`, sample index first + i) into
  /// outputs[i·T·n_out + t·n_out + o]; ok[i] = 1 when it ran, 0 when it diverged.
  /// With `rethrow`, the lowest failing run's NumericalError is thrown instead
  /// (on every rank). A lane that diverges in a batch is rerun alone, so its
  /// error is exactly the one-run error.
  void run(const Eigen::MatrixXd& points, long long first, int threads, std::size_t block, double* outputs,
           std::uint8_t* ok, bool rethrow) const;

  /// One run at germ point xi into outputs[t·n_out + o]; throws NumericalError.
  void run_one(const double* xi, long long sample, double* outputs) const;

  /// run_one as the Monte Carlo and importance-sampling stages call it: false,
  /// with the message in *error, when the run fails with a NumericalError.
  /// The runner must outlive the function.
  montecarlo::RunSample run_sample() const;

  bool batched() const { return batch_.supported(); }

 private:
  void run_block(const Eigen::MatrixXd& points, long long first, std::size_t begin, std::size_t end, double* rows,
                 std::size_t stride, std::uint8_t* ok, bool rethrow) const;

  const LoadedCase& loaded_;
  model::BatchPropagator batch_;
};

}  // namespace sigmatube::app

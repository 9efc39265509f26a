// SPDX-License-Identifier: MIT
#include "sigmatube/app/model_runs.h"

#include <algorithm>
#include <limits>
#include <memory>
#include <vector>

#include "sigmatube/core/distributed.h"
#include "sigmatube/core/error.h"
#include "sigmatube/core/parallel.h"

namespace sigmatube::app {

ModelRunner::ModelRunner(const LoadedCase& loaded) : loaded_(loaded), batch_(*loaded.closed_loop, loaded.options) {}

void ModelRunner::run_one(const double* xi, long long sample, double* outputs) const {
  const auto& cl = *loaded_.closed_loop;
  model::Perturbation p = cl.nominal();
  loaded_.germ->apply(xi, p);
  Eigen::MatrixXd out(static_cast<Eigen::Index>(cl.report_times().size()), cl.output_count());
  cl.run(p, out, sample);
  Eigen::Map<Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>>(outputs, out.rows(), out.cols()) = out;
}

montecarlo::RunSample ModelRunner::run_sample() const {
  return [this](const double* xi, long long sample, double* outputs, std::string* error) {
    try {
      run_one(xi, sample, outputs);
      return true;
    } catch (const NumericalError& e) {
      if (error) *error = e.what();
      return false;
    }
  };
}

// Rows [begin, end) of `points` into rows + (i − begin)·stride (the outputs) and
// ok[i − begin] (1 = ran, 0 = failed).
void ModelRunner::run_block(const Eigen::MatrixXd& points, long long first, std::size_t begin, std::size_t end,
                            double* rows, std::size_t stride, std::uint8_t* ok, bool rethrow) const {
  const auto& cl = *loaded_.closed_loop;
  const std::size_t columns = cl.report_times().size() * static_cast<std::size_t>(cl.output_count());
  const std::size_t lanes = end - begin;
  std::fill(ok, ok + lanes, std::uint8_t{0});
  if (batch_.supported()) {
    std::vector<model::Perturbation> perturbations(lanes, cl.nominal());
    for (std::size_t l = 0; l < lanes; ++l) {
      const Eigen::RowVectorXd xi = points.row(static_cast<Eigen::Index>(begin + l));
      loaded_.germ->apply(xi.data(), perturbations[l]);
    }
    batch_.run(perturbations.data(), static_cast<int>(lanes), rows, stride, ok);
  }
  for (std::size_t l = 0; l < lanes; ++l) {
    double* row = rows + l * stride;
    if (!ok[l]) {
      const Eigen::RowVectorXd xi = points.row(static_cast<Eigen::Index>(begin + l));
      try {
        run_one(xi.data(), first + static_cast<long long>(begin + l), row);
        ok[l] = 1;
      } catch (const NumericalError&) {
        if (rethrow) throw;
        std::fill(row, row + columns, std::numeric_limits<double>::quiet_NaN());
      }
    }
  }
}

void ModelRunner::run(const Eigen::MatrixXd& points, long long first, int threads, std::size_t block, double* outputs,
                      std::uint8_t* ok, bool rethrow) const {
  const auto& cl = *loaded_.closed_loop;
  const std::size_t count = static_cast<std::size_t>(points.rows());
  const std::size_t columns = cl.report_times().size() * static_cast<std::size_t>(cl.output_count());
  block = std::max<std::size_t>(block, 1);
  if (process_count() == 1) {
    // Alone: every block runs straight into its rows of `outputs` (the lowest
    // failing block's error is rethrown, as with several ranks).
    parallel_for_chunks(count, block, threads, [&](std::size_t b, std::size_t e) {
      run_block(points, first, b, e, outputs + b * columns, columns, ok + b, rethrow);
    });
    return;
  }
  // Over ranks: rows of width T·n_out + 1, the outputs, then 1 (ran) or 0
  // (failed), so that the status travels with the row between ranks.
  // Uninitialized (every row is written by its block), so that no thread first
  // clears the whole array alone; each block copies its own rows out, in parallel.
  const std::size_t width = columns + 1;
  const std::unique_ptr<double[]> rows(new double[count * width]);
  auto copy_out = [&](std::size_t b, std::size_t e) {
    for (std::size_t i = b; i < e; ++i) {
      const double* row = rows.get() + i * width;
      std::copy(row, row + columns, outputs + i * columns);
      ok[i] = row[columns] != 0.0 ? 1 : 0;
    }
  };
  run_distributed_rows(count, width, block, threads,
                       [&](std::size_t b, std::size_t e, double* part) {
                         run_block(points, first, b, e, part, width, ok + b, rethrow);
                         for (std::size_t i = b; i < e; ++i) part[(i - b) * width + columns] = ok[i] ? 1.0 : 0.0;
                         copy_out(b, e);
                       },
                       rows.get());
  // Rows made by other ranks arrived with the gather.
  const auto [own_begin, own_end] = rank_block(count, process_rank(), process_count());
  copy_out(0, own_begin);
  copy_out(own_end, count);
}

}  // namespace sigmatube::app

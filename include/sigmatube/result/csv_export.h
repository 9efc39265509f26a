// SPDX-License-Identifier: MIT
#pragma once
// `sigmatube export RESULT.h5 -d DIR`: time series of a result as CSV files, one
// header row whose cells name the column and its unit in brackets ("x [m]"), one
// row per report time, comma-separated, numbers with the shortest digits that read
// back to the same double (format_shortest), NaN written as "nan"
// (docs/result-file.md, "CSV export"). The files:
//   nominal.csv        t, every output of the nominal run
//   mean.csv, std.csv  t, every output: surrogate mean and standard deviation
//   quantiles.csv      t, every output at every quantile level ("x q0.5 [m]")
//   probabilities.csv  t, every constraint's pointwise violation probability
//                      (surrogate, and Monte Carlo when the cross-check ran)
//   tube.csv           t, the deterministic tube radius and contraction rate
// Files whose data the result does not hold (no surrogate, no [tube]) are left out.
#include <string>
#include <utility>
#include <vector>

#include "sigmatube/result/analysis_result.h"

namespace sigmatube::result {

/// (file name, contents) of every CSV file the result gives, in the order above.
std::vector<std::pair<std::string, std::string>> csv_export(const AnalysisResult& result);

/// `simulate --csv`: header "t,<output names>" (no units), then per report time the
/// time and the nominal outputs, numbers as in csv_export (docs/commands.md).
std::string nominal_csv(const AnalysisResult& nominal);

/// Writes csv_export(result) into `directory` (created if missing). Every path is
/// checked before the first file is written: an existing file is an InputError
/// (key "-d") unless `force`, and no output may be the file `input_path`.
/// Returns the paths written.
std::vector<std::string> write_csv_export(const AnalysisResult& result, const std::string& directory,
                                          const std::string& input_path, bool force);

}  // namespace sigmatube::result

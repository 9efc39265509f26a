// SPDX-License-Identifier: MIT
#pragma once
// The terminal summary printed by `run` and `show`.
#include <cstdint>
#include <string>
#include <vector>

#include "sigmatube/result/analysis_result.h"

// Layer result/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::result {

/// Title, case fingerprint, times, surrogate facts (germ dimension, basis size,
/// model runs, error estimate with a warning when the tolerance was not met,
/// Karhunen–Loève lines), a constraint table (bound, surrogate probability ±
/// standard error, Monte Carlo probability with its Clopper–Pearson interval,
/// importance sampling where done, margin, verdict), per-constraint details
/// (worst time, Gaussian/Cantelli reformulation checks), the Monte Carlo
/// summary, the exit verdict and the cautions. NaN prints as "—".
/// `color` adds ANSI colour to verdicts and warnings.
std::string summary_text(const AnalysisResult& result, bool color = false);

/// The cautions paragraph (product.md §7) in plain words, wrapped at 78
/// columns, no trailing newline. Shared by `run --help`, the report and the README.
std::string cautions_text();

/// One line naming the exit code of `result` (AnalysisResult::verdict_exit_code)
/// and why, e.g. "exit 1: keep-out exceeds its bound".
std::string exit_verdict_line(const AnalysisResult& result);

/// The probability that decides a constraint's verdict from the surrogate:
/// path_probability for scope "path", worst_pointwise_probability otherwise.
double surrogate_gate_probability(const ConstraintResult& c);

/// Its standard error (path_standard_error, or the pointwise standard error at
/// the time of the worst pointwise probability).
double surrogate_gate_standard_error(const ConstraintResult& c);

/// The Monte Carlo counterpart: path probability for scope "path", the
/// largest pointwise probability otherwise; NaN without Monte Carlo.
double montecarlo_gate_probability(const ConstraintResult& c);

/// Its interval at MonteCarloResult::confidence: the stored path interval for
/// scope "path"; otherwise the Clopper–Pearson interval (Clopper & Pearson,
/// Biometrika 26, 1934) of round(p·n) violations in n = runs − failed runs.
/// NaN without Monte Carlo.
void montecarlo_gate_interval(const AnalysisResult& result, const ConstraintResult& c, double out[2]);

/// Of the report times inside the constraint's window: how many have flags[k] set
/// (*ok) and how many there are (*total). The summary and the report count alike.
void window_flag_counts(const ConstraintResult& c, const std::vector<double>& time,
                        const std::vector<std::uint8_t>& flags, int* ok, int* total);

}  // namespace sigmatube::result

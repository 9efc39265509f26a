// SPDX-License-Identifier: MIT
#pragma once
// The page written by `sigmatube report OUT.h5 -o report.html`.
#include <string>

#include "sigmatube/result/analysis_result.h"

// Layer result/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::result {

struct ReportOptions {
  // Outputs drawn as the horizontal and vertical axes of the dispersion-tube
  // plot. Empty: the first two position outputs of the first constraint that
  // has a position, else outputs "x" and "y" if present, else the first two
  // outputs (with a single output, that output against time).
  std::string plane_x, plane_y;
  // Monte Carlo runs (of those kept in the result) drawn in the tube plot.
  int max_mc_runs = 30;
  // Output whose Sobol indices are plotted; empty: the output with the
  // largest surrogate standard deviation at the last report time.
  std::string sobol_output;

  /// Throws InputError (key "--plane" / "--sobol-output") naming a plane or
  /// output that `result` does not have, or negative max_mc_runs.
  void validate(const AnalysisResult& result) const;
};

/// One self-contained XHTML page (inline CSS and SVG, no scripts, no network
/// references, no external fonts) that parses as XML:
///  * the verdict, the summary table, the cautions;
///  * "plot-tube": the path in the chosen plane — nominal, surrogate mean,
///    the 3σ covariance ellipse of the surrogate at each report time (their
///    union is the tube; for a Gaussian position each ellipse holds
///    1 − e^(−9/2) ≈ 98.9 % of the probability), kept Monte Carlo runs, and
///    keep-out zones whose position lies in the plane (spheres drawn as
///    their projected circle, ellipsoids as their projected ellipse, boxes as
///    rectangles);
///  * "plot-tube-deviation": deviation from the nominal path vs time, with the
///    deterministic bound ±r(t) when the plane outputs are the tube's position;
///  * the sections of result/breakdown_report.h: "plot-tube-bound" (the
///    deterministic tube radius with the kept runs' deviation), "plot-quantiles-<k>"
///    (quantile bands) and "plot-shares-<k>" (variance shares per uncertain input
///    of each constraint's clearance, with intervals); axes carry units;
///  * "plot-probability": violation probability vs time on a log axis,
///    surrogate (solid) and Monte Carlo (dashed), bound lines (dotted);
///  * "plot-clearance-<k>" (k = 1, 2, ...): clearance mean, ±3σ band, the
///    ε-quantile, and zero, per constraint;
///  * "plot-sobol": first-order Sobol indices vs time stacked as areas, with
///    the remainder 1 − ΣS_i shown as "interactions", for one output;
///  * "plot-validation": surrogate vs Monte Carlo std and mean shift
///    (mean − nominal) per (time, output), each divided by the output's
///    largest Monte Carlo std, against the line y = x.
/// Plots whose data the result lacks are replaced by a sentence saying so.
std::string html_report(const AnalysisResult& result, const ReportOptions& options = {});

}  // namespace sigmatube::result

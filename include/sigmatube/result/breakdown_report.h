// SPDX-License-Identifier: MIT
#pragma once
// Report sections for the analyses beside the probabilistic tube (part of the
// page html_report writes): the deterministic tube bound, quantile tubes and
// variance shares per uncertain input over time for every constrained quantity.
#include <string>

#include "sigmatube/result/analysis_result.h"

namespace sigmatube::result {

/// "name [unit]", or the name alone when the result gives no unit for output j.
std::string output_label(const AnalysisResult& r, int j);

/// XHTML fragments (each starting with an <h2>): "Deterministic tube" (plot id
/// "plot-tube-bound"), "Quantile tubes" ("plot-quantiles-<k>", for the outputs
/// ix and iy, either may be −1) and "Variance shares per uncertain input"
/// ("plot-shares-<k>", one per constraint's clearance). Sections whose data the
/// result lacks say so in one line.
std::string breakdown_sections(const AnalysisResult& r, int ix, int iy);

}  // namespace sigmatube::result

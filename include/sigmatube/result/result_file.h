// SPDX-License-Identifier: MIT
#pragma once
// HDF5 result files (layout: docs/result-file.md; contract: product.md §5).
#include <string>

#include "sigmatube/result/analysis_result.h"

// Layer result/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::result {

/// Throws InputError (key "-o") if `path` exists and `force` is false, or its
/// folder does not exist. Call before any long computation so nothing is lost.
void check_output_path(const std::string& path, bool force);

/// Writes `result` to a temporary file beside `path` and moves it into place
/// only when complete: a killed run never leaves a half-written file and never
/// damages an existing one. Without `force` an existing file is never replaced
/// (the final link is atomic and fails if the name was taken meanwhile).
void write_result_file(const AnalysisResult& result, const std::string& path, bool force);

/// Reads a result file written by write_result_file. Throws InputError naming
/// the file (and the dataset) when it is missing or not a sigmatube result.
AnalysisResult read_result_file(const std::string& path);

/// Writes `text` to `path` with the same temporary-then-move rule (for CSV,
/// JSON, HTML and JUnit side outputs).
void write_text_file(const std::string& text, const std::string& path, bool force);

}  // namespace sigmatube::result

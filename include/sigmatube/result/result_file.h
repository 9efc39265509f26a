// SPDX-License-Identifier: MIT
#pragma once
// HDF5 result files (layout: docs/result-file.md; contract: product.md §5).
#include <string>

#include "sigmatube/result/analysis_result.h"

// Layer result/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::result {

/// Throws InputError (key "-o") if `path` exists and `force` is false, or its
/// folder does not exist. Call before any long computation so nothing is lost.
/// A command with several inputs or outputs uses core/output_policy.h's
/// OutputSet instead, which also refuses outputs that are inputs.
void check_output_path(const std::string& path, bool force, const std::string& option = "-o");

/// Writes `result` to a temporary file beside `path` and moves it into place
/// only when complete: a killed run never leaves a half-written file and never
/// damages an existing one. Without `force` an existing file is never replaced
/// (the final link is atomic and fails if the name was taken meanwhile).
void write_result_file(const AnalysisResult& result, const std::string& path, bool force);

/// Writes `result` to the file `file` as it is (no output policy): for
/// OutputSet::stage, which passes the temporary. The file ends with its
/// checksum block sealed (docs/result-file.md, "Integrity").
void write_result_to(const AnalysisResult& result, const std::string& file);

/// Reads a result file written by write_result_file. Verifies its checksum
/// before HDF5 parses anything; throws InputError (one line) naming the file
/// when it is missing, not a regular file, a temporary, corrupted or not a
/// sigmatube result. Any HDF5 error is an InputError, never a crash.
AnalysisResult read_result_file(const std::string& path);

/// Writes `text` to `path` with the same temporary-then-move rule (for CSV,
/// JSON, HTML and JUnit side outputs).
void write_text_file(const std::string& text, const std::string& path, bool force);

}  // namespace sigmatube::result

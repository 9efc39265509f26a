// SPDX-License-Identifier: MIT
#pragma once
// SHA-256 (FIPS 180-4), used to fingerprint the case file in result files.
#include <string>

// Layer core/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube {

/// Lower-case hex digest of `data`.
std::string sha256_hex(const std::string& data);

}  // namespace sigmatube

// SPDX-License-Identifier: MIT
// Carries the tests' precompiled header (tests/CMakeLists.txt); no code.

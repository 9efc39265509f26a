// SPDX-License-Identifier: MIT
#pragma once
// The error policy of the whole library (see DEVELOPERS.md, "Errors"):
//   InputError      anything a user can fix (case file, plan, options); exit code 2.
//   NumericalError  a computation that failed (a run diverged, a matrix was
//                   singular), naming the sample and time where known; exit code 4.
//   Internal invariants are checked always and throw std::logic_error.
#include <stdexcept>
#include <string>

// Layer core/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube {

/// Where in a user's file a value came from. `line` is 0 when unknown.
struct SourceLocation {
  std::string file;
  int line = 0;
  std::string key;  // dotted key, e.g. "uncertain[2].std" or "constraint.keep-out.radius"
};

/// Formats "file:line: key: message" leaving out the parts that are unknown.
std::string format_location_message(const SourceLocation& where, const std::string& message);

/// A problem the user can fix. what() is one line: "file:line: key: message".
class InputError : public std::runtime_error {
 public:
  explicit InputError(const std::string& message);
  InputError(SourceLocation where, const std::string& message);
  const SourceLocation& where() const { return where_; }

 private:
  SourceLocation where_;
};

/// A computation that failed. `sample` is -1 for the nominal run or when not
/// applicable; `time_in_seconds` is NaN when not applicable.
class NumericalError : public std::runtime_error {
 public:
  explicit NumericalError(const std::string& message);
  NumericalError(const std::string& message, long long sample, double time_in_seconds);
  long long sample() const { return sample_; }
  double time_in_seconds() const { return time_in_seconds_; }

 private:
  long long sample_ = -1;
  double time_in_seconds_;
};

}  // namespace sigmatube

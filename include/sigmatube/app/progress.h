// SPDX-License-Identifier: MIT
#pragma once
// A progress line on stderr with rate and time left, for long stages. Shown
// only when enabled and stderr is a terminal; otherwise every call is a no-op.
#include <chrono>
#include <cstddef>
#include <mutex>
#include <string>

// Layer app/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::app {

class ProgressBar {
 public:
  ProgressBar(std::string label, std::size_t total, bool enabled);
  ~ProgressBar();
  /// Thread-safe; redraws at most ten times a second.
  void update(std::size_t done);
  void finish();

  /// True when stderr is a terminal (and so a bar can be drawn).
  static bool stderr_is_terminal();

 private:
  void draw(std::size_t done, bool final);
  std::string label_;
  std::size_t total_;
  bool enabled_;
  bool finished_ = false;
  std::mutex mutex_;
  std::chrono::steady_clock::time_point start_, last_draw_;
};

}  // namespace sigmatube::app

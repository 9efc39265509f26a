// SPDX-License-Identifier: MIT
#include "sigmatube/app/progress.h"

#include <unistd.h>

#include <cstdio>

namespace sigmatube::app {

bool ProgressBar::stderr_is_terminal() { return ::isatty(STDERR_FILENO) == 1; }

ProgressBar::ProgressBar(std::string label, std::size_t total, bool enabled)
    : label_(std::move(label)),
      total_(total),
      enabled_(enabled && total > 0 && stderr_is_terminal()),
      start_(std::chrono::steady_clock::now()),
      last_draw_(start_) {}

ProgressBar::~ProgressBar() { finish(); }

void ProgressBar::update(std::size_t done) {
  if (!enabled_) return;
  std::lock_guard<std::mutex> lock(mutex_);
  if (finished_) return;
  const auto now = std::chrono::steady_clock::now();
  if (now - last_draw_ < std::chrono::milliseconds(100) && done < total_) return;
  last_draw_ = now;
  draw(done, false);
}

void ProgressBar::finish() {
  if (!enabled_) return;
  std::lock_guard<std::mutex> lock(mutex_);
  if (finished_) return;
  finished_ = true;
  draw(total_, true);
}

void ProgressBar::draw(std::size_t done, bool final) {
  constexpr int kWidth = 28;
  const double fraction = total_ ? static_cast<double>(done) / static_cast<double>(total_) : 1.0;
  const double elapsed = std::chrono::duration<double>(std::chrono::steady_clock::now() - start_).count();
  const double rate = elapsed > 0 ? static_cast<double>(done) / elapsed : 0.0;
  const double left = rate > 0 ? static_cast<double>(total_ - done) / rate : 0.0;
  char bar[kWidth + 1];
  const int filled = static_cast<int>(fraction * kWidth + 0.5);
  for (int i = 0; i < kWidth; ++i) bar[i] = i < filled ? '#' : '.';
  bar[kWidth] = '\0';
  std::fprintf(stderr, "\r%-22s [%s] %zu/%zu  %.0f/s  %s %.0fs   ", label_.c_str(), bar, done, total_, rate,
               final ? "took" : "left", final ? elapsed : left);
  if (final) std::fputc('\n', stderr);
  std::fflush(stderr);
}

}  // namespace sigmatube::app

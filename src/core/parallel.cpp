// SPDX-License-Identifier: MIT
#include "sigmatube/core/parallel.h"

#include <algorithm>
#include <atomic>
#include <exception>
#include <mutex>
#include <thread>
#include <vector>

namespace sigmatube {

int resolve_thread_count(int requested) {
  if (requested > 0) return requested;
  const unsigned hw = std::thread::hardware_concurrency();
  return hw == 0 ? 1 : static_cast<int>(hw);
}

void parallel_for_chunks(std::size_t count, std::size_t chunk, int threads,
                         const std::function<void(std::size_t, std::size_t)>& body) {
  if (count == 0) return;
  chunk = std::max<std::size_t>(chunk, 1);
  const std::size_t n_chunks = (count + chunk - 1) / chunk;
  const int n_threads = static_cast<int>(std::min<std::size_t>(resolve_thread_count(threads), n_chunks));
  std::atomic<std::size_t> next{0};
  std::mutex error_mutex;
  std::size_t error_chunk = n_chunks;
  std::exception_ptr error;
  auto worker = [&] {
    for (;;) {
      const std::size_t c = next.fetch_add(1);
      if (c >= n_chunks) return;
      {
        std::lock_guard<std::mutex> lock(error_mutex);
        if (error && c > error_chunk) continue;  // later chunks are moot once one failed
      }
      try {
        body(c * chunk, std::min(count, (c + 1) * chunk));
      } catch (...) {
        std::lock_guard<std::mutex> lock(error_mutex);
        if (c < error_chunk) {
          error_chunk = c;
          error = std::current_exception();
        }
      }
    }
  };
  if (n_threads <= 1) {
    worker();
  } else {
    // The calling thread is one of the workers: one thread fewer to start and
    // join per call (loops called once per wave of work do this often).
    std::vector<std::thread> pool;
    pool.reserve(static_cast<std::size_t>(n_threads - 1));
    for (int t = 1; t < n_threads; ++t) pool.emplace_back(worker);
    worker();
    for (auto& thread : pool) thread.join();
  }
  if (error) std::rethrow_exception(error);
}

void parallel_for(std::size_t count, int threads, const std::function<void(std::size_t)>& body) {
  parallel_for_chunks(count, 1, threads, [&](std::size_t begin, std::size_t end) {
    for (std::size_t i = begin; i < end; ++i) body(i);
  });
}

}  // namespace sigmatube

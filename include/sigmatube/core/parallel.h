// SPDX-License-Identifier: MIT
#pragma once
// Deterministic parallel loops. Work is split into fixed index ranges; each index
// is processed exactly once and writes only its own outputs, so a result never
// depends on the number of threads. Reductions are done by the caller in index
// order after the loop.
#include <cstddef>
#include <functional>

// Layer core/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube {

/// Number of worker threads to use: `requested` if > 0, else the hardware count.
int resolve_thread_count(int requested);

/// Calls body(i) for every i in [0, count) on up to `threads` threads.
/// The first exception thrown by any body (lowest index wins, so the message is
/// the same for any thread count) is rethrown after all threads stop.
void parallel_for(std::size_t count, int threads, const std::function<void(std::size_t)>& body);

/// Like parallel_for, but hands contiguous chunks [begin, end) to body; chunk
/// boundaries depend only on `count` and `chunk`, never on the thread count.
void parallel_for_chunks(std::size_t count, std::size_t chunk, int threads,
                         const std::function<void(std::size_t begin, std::size_t end)>& body);

}  // namespace sigmatube

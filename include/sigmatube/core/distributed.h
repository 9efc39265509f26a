// SPDX-License-Identifier: MIT
#pragma once
// Model runs spread over processes (MPI ranks) and, within each, over threads.
//
// The only collective pattern the pipeline needs: N independent jobs that each
// produce a row of `width` doubles. Rank r of R computes the contiguous block
//   [⌊N·r/R⌋, ⌊N·(r+1)/R⌋)
// on its threads, then every rank receives every row (MPI_Allgatherv), so all
// ranks continue with identical data and identical later arithmetic: the results
// are those of one process for any number of ranks and threads.
//
// Without SIGMATUBE_WITH_MPI (or when run without mpirun) there is one rank and
// run_distributed_rows is a plain deterministic thread loop.
#include <cstddef>
#include <functional>
#include <utility>
#include <vector>

// Layer core/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube {

/// Initializes MPI (thread level "funneled": only the thread that made the
/// session calls MPI) when built with MPI, and finalizes it when destroyed.
/// Without MPI it does nothing. Make one, in main, before anything else.
class DistributedSession {
 public:
  DistributedSession(int* argc, char*** argv);
  ~DistributedSession();
  DistributedSession(const DistributedSession&) = delete;
  DistributedSession& operator=(const DistributedSession&) = delete;

 private:
  bool owns_ = false;
};

/// From now on this process works alone (process_count() = 1, rank 0): for
/// commands that do not share their runs, so ranks never wait for each other.
void use_single_process();

/// This process's rank (0 without MPI or before a session).
int process_rank();
/// Number of ranks (1 without MPI or before a session).
int process_count();

/// Block [begin, end) of [0, count) owned by `rank` of `size`.
std::pair<std::size_t, std::size_t> rank_block(std::size_t count, int rank, int size);

/// Fills rows [begin, end): rows[(i − begin)·width + k] for job i.
using RowBlockFill = std::function<void(std::size_t begin, std::size_t end, double* rows)>;

/// Runs jobs [0, count) over ranks and threads and gathers all rows, row-major,
/// into `all` (count·width doubles) on every rank. Within a rank the block is cut
/// into chunks of `chunk` jobs (boundaries from the job index only) spread over
/// `threads` threads. If a fill throws, the exception of the lowest failing chunk
/// is rethrown on every rank (on ranks other than its own as the same category —
/// NumericalError, InputError or std::runtime_error — with the same message).
void run_distributed_rows(std::size_t count, std::size_t width, std::size_t chunk, int threads,
                          const RowBlockFill& fill, double* all);

/// Work items [0, count) that each leave a variable-length result (e.g. a
/// partial accumulator): rank r computes the items of its rank_block on its
/// threads (compute(i), at most `threads` at once), packs each as doubles
/// (pack(i)), and every rank receives every other rank's packed items and
/// unpacks them (unpack(i, data, size)) in item order, so that all ranks then
/// hold every item's result as if they had computed it. With one rank only
/// compute runs (no packing). Exceptions as run_distributed_rows: the lowest
/// failing item's is rethrown on every rank.
using ItemCompute = std::function<void(std::size_t item)>;
using ItemPack = std::function<std::vector<double>(std::size_t item)>;
using ItemUnpack = std::function<void(std::size_t item, const double* data, std::size_t size)>;
void run_distributed_items(std::size_t count, int threads, const ItemCompute& compute, const ItemPack& pack,
                           const ItemUnpack& unpack);

}  // namespace sigmatube

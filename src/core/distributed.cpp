// SPDX-License-Identifier: MIT
#include "sigmatube/core/distributed.h"

#include <algorithm>
#include <climits>
#include <exception>
#include <mutex>
#include <stdexcept>
#include <string>
#include <vector>

#ifdef SIGMATUBE_WITH_MPI
#define OMPI_SKIP_MPICXX 1  // the C API only
#include <mpi.h>
#endif

#include "sigmatube/core/error.h"
#include "sigmatube/core/parallel.h"

namespace sigmatube {
namespace {

bool single_process = false;

[[maybe_unused]] bool mpi_active() {
  if (single_process) return false;
#ifdef SIGMATUBE_WITH_MPI
  int initialized = 0, finalized = 0;
  MPI_Initialized(&initialized);
  MPI_Finalized(&finalized);
  return initialized && !finalized;
#else
  return false;
#endif
}

enum class ErrorKind : int { none = 0, numerical = 1, input = 2, other = 3 };

[[maybe_unused]] ErrorKind kind_of(const std::exception_ptr& error, std::string& message) {
  try {
    std::rethrow_exception(error);
  } catch (const NumericalError& e) {
    message = e.what();
    return ErrorKind::numerical;
  } catch (const InputError& e) {
    message = e.what();
    return ErrorKind::input;
  } catch (const std::exception& e) {
    message = e.what();
    return ErrorKind::other;
  } catch (...) {
    message = "unknown error";
    return ErrorKind::other;
  }
}

}  // namespace

void use_single_process() { single_process = true; }

DistributedSession::DistributedSession(int* argc, char*** argv) {
#ifdef SIGMATUBE_WITH_MPI
  int initialized = 0;
  MPI_Initialized(&initialized);
  if (!initialized) {
    int provided = 0;
    MPI_Init_thread(argc, argv, MPI_THREAD_FUNNELED, &provided);
    owns_ = true;
  }
#else
  (void)argc;
  (void)argv;
#endif
}

DistributedSession::~DistributedSession() {
#ifdef SIGMATUBE_WITH_MPI
  int finalized = 0;
  MPI_Finalized(&finalized);
  if (owns_ && !finalized) MPI_Finalize();
#endif
}

int process_rank() {
#ifdef SIGMATUBE_WITH_MPI
  if (mpi_active()) {
    int rank = 0;
    MPI_Comm_rank(MPI_COMM_WORLD, &rank);
    return rank;
  }
#endif
  return 0;
}

int process_count() {
#ifdef SIGMATUBE_WITH_MPI
  if (mpi_active()) {
    int size = 1;
    MPI_Comm_size(MPI_COMM_WORLD, &size);
    return size;
  }
#endif
  return 1;
}

std::pair<std::size_t, std::size_t> rank_block(std::size_t count, int rank, int size) {
  if (size <= 0 || rank < 0 || rank >= size) throw std::logic_error("rank_block: bad rank or size");
  // 128-bit products: count·rank cannot overflow.
  const auto at = [&](int r) {
    return static_cast<std::size_t>(static_cast<unsigned __int128>(count) * static_cast<unsigned>(r) /
                                    static_cast<unsigned>(size));
  };
  return {at(rank), at(rank + 1)};
}

namespace {

#ifdef SIGMATUBE_WITH_MPI
// Ranks agree on the lowest failing job of [0, count) (error_at = count: none
// here); its owner tells everybody what failed, and every rank throws it.
void rethrow_lowest_error(std::size_t count, std::size_t error_at, const std::exception_ptr& error) {
  const int rank = process_rank(), size = process_count();
  unsigned long long local = error_at, lowest = 0;
  MPI_Allreduce(&local, &lowest, 1, MPI_UNSIGNED_LONG_LONG, MPI_MIN, MPI_COMM_WORLD);
  if (lowest >= count) return;
  int owner = 0;
  while (owner + 1 < size && rank_block(count, owner + 1, size).first <= lowest) ++owner;
  std::string message;
  int kind = static_cast<int>(ErrorKind::none);
  if (rank == owner) kind = static_cast<int>(kind_of(error, message));
  int length = static_cast<int>(message.size());
  MPI_Bcast(&kind, 1, MPI_INT, owner, MPI_COMM_WORLD);
  MPI_Bcast(&length, 1, MPI_INT, owner, MPI_COMM_WORLD);
  message.resize(static_cast<std::size_t>(length));
  if (length > 0) MPI_Bcast(message.data(), length, MPI_CHAR, owner, MPI_COMM_WORLD);
  if (rank == owner) std::rethrow_exception(error);
  switch (static_cast<ErrorKind>(kind)) {
    case ErrorKind::numerical: throw NumericalError(message);
    case ErrorKind::input: throw InputError(message);
    default: throw std::runtime_error(message);
  }
}
#endif

// The exception of the lowest-numbered failing job of this rank's block (jobs
// run on several threads), and what every rank does with it.
class LowestError {
 public:
  explicit LowestError(std::size_t none) : count_(none), at_(none) {}
  template <class Job>
  void guard(std::size_t index, const Job& job) {
    try {
      job();
    } catch (...) {
      std::lock_guard<std::mutex> lock(mutex_);
      if (index < at_) {
        at_ = index;
        error_ = std::current_exception();
      }
    }
  }
  /// With one rank (or without MPI): rethrows the error, else returns true (done).
  /// With several: all ranks agree on the lowest failing job and throw it, or
  /// return false to go on with the exchange.
  bool settle(int size) const {
#ifdef SIGMATUBE_WITH_MPI
    if (size > 1) {
      rethrow_lowest_error(count_, at_, error_);
      return false;
    }
#else
    (void)size;
#endif
    if (error_) std::rethrow_exception(error_);
    return true;
  }

 private:
  std::mutex mutex_;
  std::size_t count_, at_;
  std::exception_ptr error_;
};

}  // namespace

void run_distributed_rows(std::size_t count, std::size_t width, std::size_t chunk, int threads,
                          const RowBlockFill& fill, double* all) {
  if (count == 0) return;
  if (width == 0 || !fill || all == nullptr) throw std::logic_error("run_distributed_rows: bad arguments");
  const int rank = process_rank(), size = process_count();
  const auto [begin, end] = rank_block(count, rank, size);

  // Local block, chunked; the lowest failing chunk's exception is kept.
  LowestError failure(count);
  parallel_for_chunks(end - begin, std::max<std::size_t>(chunk, 1), threads, [&](std::size_t b, std::size_t e) {
    failure.guard(begin + b, [&] { fill(begin + b, begin + e, all + (begin + b) * width); });
  });
  if (failure.settle(size)) return;
#ifdef SIGMATUBE_WITH_MPI
  std::vector<int> counts(static_cast<std::size_t>(size)), offsets(static_cast<std::size_t>(size));
  for (int r = 0; r < size; ++r) {
    const auto [b, e] = rank_block(count, r, size);
    if ((e - b) * width > static_cast<std::size_t>(INT_MAX) || b * width > static_cast<std::size_t>(INT_MAX))
      throw std::logic_error("run_distributed_rows: block too large for one MPI message");
    counts[static_cast<std::size_t>(r)] = static_cast<int>((e - b) * width);
    offsets[static_cast<std::size_t>(r)] = static_cast<int>(b * width);
  }
  MPI_Allgatherv(MPI_IN_PLACE, 0, MPI_DATATYPE_NULL, all, counts.data(), offsets.data(), MPI_DOUBLE, MPI_COMM_WORLD);
#endif
}

void run_distributed_items(std::size_t count, int threads, const ItemCompute& compute, const ItemPack& pack,
                           const ItemUnpack& unpack) {
  if (count == 0) return;
  if (!compute || !pack || !unpack) throw std::logic_error("run_distributed_items: bad arguments");
  const int rank = process_rank(), size = process_count();
  const auto [begin, end] = rank_block(count, rank, size);
  LowestError failure(count);
  parallel_for(end - begin, threads, [&](std::size_t i) { failure.guard(begin + i, [&] { compute(begin + i); }); });
  if (failure.settle(size)) return;
#ifdef SIGMATUBE_WITH_MPI
  // Own items packed back to back; first every item's length, then the data.
  std::vector<double> own;
  std::vector<long long> own_sizes;
  for (std::size_t i = begin; i < end; ++i) {
    const std::vector<double> packed = pack(i);
    own_sizes.push_back(static_cast<long long>(packed.size()));
    own.insert(own.end(), packed.begin(), packed.end());
  }
  std::vector<int> counts(static_cast<std::size_t>(size)), offsets(static_cast<std::size_t>(size));
  for (int r = 0; r < size; ++r) {
    const auto [b, e] = rank_block(count, r, size);
    counts[static_cast<std::size_t>(r)] = static_cast<int>(e - b);
    offsets[static_cast<std::size_t>(r)] = static_cast<int>(b);
  }
  std::vector<long long> sizes(count);
  MPI_Allgatherv(own_sizes.data(), static_cast<int>(own_sizes.size()), MPI_LONG_LONG, sizes.data(), counts.data(),
                 offsets.data(), MPI_LONG_LONG, MPI_COMM_WORLD);
  std::vector<std::size_t> item_offset(count + 1, 0);
  for (std::size_t i = 0; i < count; ++i) item_offset[i + 1] = item_offset[i] + static_cast<std::size_t>(sizes[i]);
  if (item_offset[count] > static_cast<std::size_t>(INT_MAX))
    throw std::logic_error("run_distributed_items: results too large for one MPI message");
  for (int r = 0; r < size; ++r) {
    const auto [b, e] = rank_block(count, r, size);
    counts[static_cast<std::size_t>(r)] = static_cast<int>(item_offset[e] - item_offset[b]);
    offsets[static_cast<std::size_t>(r)] = static_cast<int>(item_offset[b]);
  }
  std::vector<double> all(item_offset[count]);
  MPI_Allgatherv(own.data(), static_cast<int>(own.size()), MPI_DOUBLE, all.data(), counts.data(), offsets.data(),
                 MPI_DOUBLE, MPI_COMM_WORLD);
  for (std::size_t i = 0; i < count; ++i)
    if (i < begin || i >= end) unpack(i, all.data() + item_offset[i], item_offset[i + 1] - item_offset[i]);
#endif
}

}  // namespace sigmatube

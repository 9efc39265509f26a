// SPDX-License-Identifier: MIT
// Result integrity (docs/result-file.md, "Integrity"): every result file carries
// a SHA-256 of everything after its checksum block, verified before HDF5 parses
// anything. A fixed-seed fuzz test over corrupted copies of a result written
// from the invented fixture (result_fixture.h) asserts: no signal, one-line
// InputError, never a silently read corrupted file. A second set of mutants is
// re-sealed with a valid checksum, so that the HDF5 reader itself meets damaged
// structures; each is read in a child process and must end in a clean result
// or a one-line InputError, never a signal.
#include <gtest/gtest.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <csignal>
#include <cstdlib>
#include <iostream>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "command_line.h"
#include "result_fixture.h"
#include "sigmatube/core/counter_rng.h"
#include "sigmatube/core/error.h"
#include "sigmatube/core/sha256.h"
#include "sigmatube/result/result_file.h"

namespace {

namespace fs = std::filesystem;
using namespace sigmatube;
using sigmatube::testing::count_lines;
using sigmatube::testing::run_command;

// Mutant counts: a few hundred in the Release pass, fewer under the sanitizers
// (SIGMATUBE_SANITIZED), where each HDF5 read in a child is much slower.
bool sanitized() { return std::getenv("SIGMATUBE_SANITIZED") != nullptr; }
int verified_mutants() { return sanitized() ? 150 : 400; }
int resealed_mutants() { return sanitized() ? 60 : 200; }
constexpr unsigned long long kFuzzSeed = 20261203ULL;
// Layout of the checksum block (docs/result-file.md): 512 bytes at offset 0.
constexpr std::size_t kBlock = 512;
// A child reading one mutant is stopped (SIGALRM) after this long: a hang.
constexpr unsigned kChildSeconds = 10;

std::string read_bytes(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream out;
  out << in.rdbuf();
  return out.str();
}

void write_bytes(const fs::path& path, const std::string& bytes) {
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out << bytes;
}

struct Folder {
  fs::path path;
  Folder() : path(fs::temp_directory_path() / ("sigmatube_integrity_" + std::to_string(::getpid()))) {
    fs::remove_all(path);
    fs::create_directories(path);
  }
  ~Folder() { fs::remove_all(path); }
};

fs::path fixture_file(const Folder& folder) {
  const fs::path path = folder.path / "fixture.h5";
  if (!fs::exists(path)) result::write_result_file(result::testing::make_fixture_result(), path.string(), false);
  return path;
}

// One mutation of `bytes`, chosen by the counter-based generator: flip one bit,
// overwrite a region with random bytes, zero a region, or truncate.
std::string mutate(std::string bytes, std::uint64_t index, std::size_t from) {
  const CounterRng rng(kFuzzSeed);
  std::uint64_t draw = 0;
  const std::size_t size = bytes.size();
  const auto pick = [&](std::size_t lo, std::size_t hi) {
    return lo + static_cast<std::size_t>(rng.uniform(index, draw++) * static_cast<double>(hi - lo));
  };
  const std::size_t at = pick(from, size);
  switch (index % 4) {
    case 0: bytes[at] = static_cast<char>(bytes[at] ^ (1 << pick(0, 8))); break;
    case 1: {
      const std::size_t n = std::min<std::size_t>(pick(1, 64), size - at);
      for (std::size_t k = 0; k < n; ++k) bytes[at + k] = static_cast<char>(pick(0, 256));
      break;
    }
    case 2: {
      const std::size_t n = std::min<std::size_t>(pick(1, 256), size - at);
      for (std::size_t k = 0; k < n; ++k) bytes[at + k] = '\0';
      break;
    }
    default: bytes.resize(std::max(from, at)); break;
  }
  return bytes;
}

// Writes a valid checksum block for the body (the format of docs/result-file.md).
std::string reseal(std::string bytes) {
  if (bytes.size() < kBlock) return bytes;
  const std::string body = bytes.substr(kBlock);
  std::string block = "sigmatube result checksum v1\nsha256 " + sha256_hex(body) + "\nbytes " +
                      std::to_string(body.size()) + "\n";
  block.resize(kBlock, '\0');
  return block + body;
}

TEST(ResultIntegrity, FixtureRoundTripsWithItsChecksum) {
  const Folder folder;
  const fs::path file = fixture_file(folder);
  const std::string bytes = read_bytes(file);
  ASSERT_GT(bytes.size(), kBlock);
  EXPECT_EQ(bytes.rfind("sigmatube result checksum v1\nsha256 ", 0), 0u);
  EXPECT_NO_THROW((void)result::read_result_file(file.string()));
}

TEST(ResultIntegrity, OneFlippedByteIsRefusedWithOneLine) {
  const Folder folder;
  std::string bytes = read_bytes(fixture_file(folder));
  bytes[bytes.size() / 2] = static_cast<char>(bytes[bytes.size() / 2] ^ 0x10);
  const fs::path bad = folder.path / "flipped.h5";
  write_bytes(bad, bytes);
  try {
    (void)result::read_result_file(bad.string());
    FAIL() << "a corrupted file was read";
  } catch (const InputError& e) {
    const std::string what = e.what();
    EXPECT_EQ(what.find('\n'), std::string::npos) << what;
    EXPECT_NE(what.find("checksum"), std::string::npos) << what;
    EXPECT_EQ(what.rfind(bad.string(), 0), 0u) << what;
  }
}

TEST(ResultIntegrity, TruncatedFileNamesTheTruncation) {
  const Folder folder;
  const std::string bytes = read_bytes(fixture_file(folder));
  const fs::path bad = folder.path / "truncated.h5";
  write_bytes(bad, bytes.substr(0, bytes.size() - 100));
  try {
    (void)result::read_result_file(bad.string());
    FAIL() << "a truncated file was read";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("truncated"), std::string::npos) << e.what();
  }
}

TEST(ResultIntegrity, FuzzedCopiesAreAllRefusedWithOneLine) {
  const Folder folder;
  const std::string original = read_bytes(fixture_file(folder));
  const fs::path mutant = folder.path / "mutant.h5";
  int refused = 0;
  for (int i = 0; i < verified_mutants(); ++i) {
    // Mutations anywhere, the checksum block included.
    const std::string bytes = mutate(original, static_cast<std::uint64_t>(i), 0);
    if (bytes == original) continue;
    write_bytes(mutant, bytes);
    SCOPED_TRACE("mutant " + std::to_string(i));
    try {
      (void)result::read_result_file(mutant.string());
      ADD_FAILURE() << "a corrupted copy was read without complaint";
    } catch (const InputError& e) {
      ++refused;
      EXPECT_EQ(std::string(e.what()).find('\n'), std::string::npos) << e.what();
    }
  }
  EXPECT_GT(refused, verified_mutants() / 2);
}

// Re-sealed mutants reach the HDF5 reader. Each read runs in a child process:
// a signal there is reported, not hidden. The child exits 0 (read), 2 (one-line
// InputError) or 3 (any other exception). A child still reading after
// kChildSeconds is stopped and counted as a hang: the HDF5 library can loop on
// some forged structures, which only a file with a valid checksum over damaged
// contents (a deliberate forgery, not a corruption) reaches. Hangs are printed,
// crashes and non-InputError exceptions fail the test.
TEST(ResultIntegrity, ResealedMutantsNeverCrashTheReader) {
  const Folder folder;
  const std::string original = read_bytes(fixture_file(folder));
  const fs::path mutant = folder.path / "resealed.h5";
  int refused = 0, hangs = 0;
  for (int i = 0; i < resealed_mutants(); ++i) {
    const std::string bytes = reseal(mutate(original, 100000 + static_cast<std::uint64_t>(i), kBlock));
    write_bytes(mutant, bytes);
    const pid_t child = ::fork();
    ASSERT_GE(child, 0);
    if (child == 0) {
      ::alarm(kChildSeconds);
      int code = 0;
      try {
        (void)result::read_result_file(mutant.string());
      } catch (const InputError& e) {
        code = std::string(e.what()).find('\n') == std::string::npos ? 2 : 4;
      } catch (...) {
        code = 3;
      }
      ::_exit(code);
    }
    int status = 0;
    ::waitpid(child, &status, 0);
    SCOPED_TRACE("resealed mutant " + std::to_string(i));
    if (WIFSIGNALED(status) && WTERMSIG(status) == SIGALRM) {
      ++hangs;
      continue;
    }
    ASSERT_TRUE(WIFEXITED(status)) << "signal " << (WIFSIGNALED(status) ? WTERMSIG(status) : 0);
    const int code = WEXITSTATUS(status);
    EXPECT_TRUE(code == 0 || code == 2) << "exit " << code;
    refused += code == 2;
  }
  std::cout << "resealed mutants: " << resealed_mutants() << ", refused " << refused << ", HDF5 hangs " << hangs
            << "\n";
  EXPECT_GT(refused, 0);
}

TEST(ResultIntegrity, ShowOfCorruptedCopiesExitsTwoWithOneLine) {
  const Folder folder;
  const std::string original = read_bytes(fixture_file(folder));
  for (int i = 0; i < 8; ++i) {
    const fs::path mutant = folder.path / ("show_" + std::to_string(i) + ".h5");
    const std::string bytes = mutate(original, 200000 + static_cast<std::uint64_t>(i), 0);
    if (bytes == original) continue;  // e.g. zeros written over zeros
    write_bytes(mutant, bytes);
    const auto result = run_command("show '" + mutant.string() + "'");
    SCOPED_TRACE(result.stderr_text);
    EXPECT_EQ(result.signal, 0);
    EXPECT_EQ(result.exit_code, 2);
    EXPECT_EQ(count_lines(result.stderr_text), 1);
  }
}

TEST(ResultIntegrity, NonResultInputsSayWhatTheyAre) {
  const Folder folder;
  const fs::path text = folder.path / "notes.h5";
  write_bytes(text, "just some text\n");
  const fs::path fifo = folder.path / "pipe.h5";
  ASSERT_EQ(::mkfifo(fifo.c_str(), 0600), 0);
  const std::vector<std::pair<std::string, std::string>> inputs = {
      {text.string(), "not a sigmatube result"},
      {folder.path.string(), "is a folder"},
      {fifo.string(), "FIFO"},
      {"/dev/null", "is a device"},
      {(folder.path / "missing.h5").string(), "no such file"}};
  for (const auto& [path, fragment] : inputs) {
    const auto result = run_command("show '" + path + "'");
    SCOPED_TRACE(path + ": " + result.stderr_text);
    EXPECT_EQ(result.exit_code, 2);
    EXPECT_EQ(count_lines(result.stderr_text), 1);
    EXPECT_NE(result.stderr_text.find(fragment), std::string::npos);
  }
}

}  // namespace

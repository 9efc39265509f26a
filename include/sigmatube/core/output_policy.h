// SPDX-License-Identifier: MIT
#pragma once
// The one output policy of every command (docs/result-file.md, "Output policy"):
//   1. An output that is, or resolves through links to, an input of the same
//      command or another of its outputs is refused before any work, with or
//      without --force. An existing file is replaced only with --force.
//   2. Every output is written to a temporary sibling `OUT.tmp.<pid>` and moved
//      into place only when it, and every other output of the command, is
//      complete: a failing side output leaves no result file behind.
//   3. Temporaries of this process are removed on SIGINT/SIGTERM, which print
//      one line and exit 130/143 (install_interrupt_cleanup()).
//   4. Temporaries of processes that are no longer running are "stale": commands
//      that read a folder note them (stale_temporaries_note) and a temporary is
//      never read as a result (refuse_temporary_as_input).
// Commands build one OutputSet, declare inputs and outputs, call check() before
// computing, stage every output and commit() at the end.
#include <functional>
#include <string>
#include <vector>

namespace sigmatube {

/// True if `a` and `b` name the same file: the same inode when both exist,
/// otherwise the same path after resolving links and `..` (std::filesystem::weakly_canonical).
bool same_file(const std::string& a, const std::string& b);

/// The temporary sibling an output of this process is written to: `PATH.tmp.<pid>`.
std::string temporary_sibling(const std::string& path);

/// If `path` has the form `X.tmp.<digits>` returns the process id, else -1.
long long temporary_owner(const std::string& path);

/// True if process `pid` is running (kill(pid, 0) does not report ESRCH).
bool process_running(long long pid);

/// Why `path` cannot be read as an input file ("no such file", "is a folder",
/// "is a FIFO (named pipe)", "is a device", …), or "" when it is a regular file.
std::string input_file_problem(const std::string& path);

/// Throws InputError if `path` is a temporary of this policy (never a result or an input).
void refuse_temporary_as_input(const std::string& path, const std::string& option);

/// One line per stale temporary in `folder` (`note: …`), or "" if there is none.
std::string stale_temporaries_note(const std::string& folder);

/// Installs handlers for SIGINT and SIGTERM that remove this process's
/// registered temporaries, print one line to stderr and exit 130 / 143.
void install_interrupt_cleanup();

/// Registers / unregisters a temporary for removal on SIGINT/SIGTERM.
/// Registration is bounded (a few dozen at once); beyond that a temporary is
/// still removed on errors, only not on signals.
int register_temporary(const std::string& path);
void unregister_temporary(int slot);

class OutputSet {
 public:
  explicit OutputSet(bool force) : force_(force) {}
  OutputSet(const OutputSet&) = delete;
  OutputSet& operator=(const OutputSet&) = delete;
  /// Removes every temporary that was staged but not committed.
  ~OutputSet();

  /// A file the command reads (`option` names it in messages, e.g. "CASE").
  /// Empty paths are ignored.
  OutputSet& input(const std::string& path, const std::string& option);
  /// A file the command writes (`option` is e.g. "-o", "--json"). Empty paths are ignored.
  OutputSet& output(const std::string& path, const std::string& option);

  /// Refuses, naming the option, an output that is an input or another output,
  /// an existing file without force, a folder, a missing or unwritable folder.
  /// Call before any work; stage() calls it again for its path.
  void check() const;

  /// Writes one declared output to its temporary sibling through `write`
  /// (which receives the temporary's path). On failure every temporary of this
  /// set is removed and the exception propagates.
  void stage(const std::string& path, const std::function<void(const std::string& temporary)>& write);
  void stage_text(const std::string& path, const std::string& text);

  /// Moves every staged temporary into place (without force: an atomic link
  /// that never replaces a file taken meanwhile).
  void commit();

  bool force() const { return force_; }

 private:
  struct Entry {
    std::string path;
    std::string option;
  };
  struct Staged {
    std::string path;
    std::string temporary;
    std::string option;
    int slot = -1;
  };
  void check_output(const Entry& out, std::size_t index) const;
  const Entry* find_output(const std::string& path) const;
  void discard();

  bool force_;
  std::vector<Entry> inputs_;
  std::vector<Entry> outputs_;
  std::vector<Staged> staged_;
};

/// Writes `text` to the file `path` (no policy: used for temporaries).
void write_whole_file(const std::string& path, const std::string& text, const std::string& option);

}  // namespace sigmatube

// SPDX-License-Identifier: MIT
#include "sigmatube/core/output_policy.h"

#include <signal.h>
#include <sys/stat.h>
#include <unistd.h>

#include <atomic>
#include <cerrno>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "sigmatube/core/error.h"

namespace sigmatube {
namespace {

namespace fs = std::filesystem;

constexpr const char* kTemporaryMarker = ".tmp.";

// ---------------------------------------------------------------- signal-safe registry

constexpr int kSlots = 64;
constexpr std::size_t kPathBytes = 4096;
struct Slot {
  std::atomic<bool> used{false};
  char path[kPathBytes];
};
Slot g_slots[kSlots];

void write_stderr(const char* text) {
  std::size_t n = std::strlen(text);
  while (n > 0) {
    const ssize_t w = ::write(STDERR_FILENO, text, n);
    if (w <= 0) return;
    text += w;
    n -= static_cast<std::size_t>(w);
  }
}

extern "C" void on_interrupt(int signal_number) {
  // Only async-signal-safe calls: unlink, write, _exit.
  int removed = 0;
  for (auto& slot : g_slots)
    if (slot.used.load(std::memory_order_acquire) && ::unlink(slot.path) == 0) ++removed;
  const bool term = signal_number == SIGTERM;
  write_stderr(term ? "sigmatube: terminated (SIGTERM)" : "sigmatube: interrupted (SIGINT)");
  if (removed > 0) {
    char digits[16];
    int k = 0;
    char reversed[16];
    int value = removed;
    while (value > 0 && k < 15) {
      reversed[k++] = static_cast<char>('0' + value % 10);
      value /= 10;
    }
    for (int i = 0; i < k; ++i) digits[i] = reversed[k - 1 - i];
    digits[k] = '\0';
    write_stderr("; removed ");
    write_stderr(digits);
    write_stderr(removed == 1 ? " unfinished output file" : " unfinished output files");
  }
  write_stderr("; no output was written\n");
  ::_exit(128 + signal_number);
}

SourceLocation at(const std::string& path, const std::string& option) { return SourceLocation{path, 0, option}; }

}  // namespace

int register_temporary(const std::string& path) {
  if (path.size() + 1 > kPathBytes) return -1;
  for (int i = 0; i < kSlots; ++i) {
    Slot& slot = g_slots[i];
    if (slot.used.load(std::memory_order_acquire)) continue;
    std::memcpy(slot.path, path.c_str(), path.size() + 1);
    slot.used.store(true, std::memory_order_release);
    return i;
  }
  return -1;
}

void unregister_temporary(int slot) {
  if (slot >= 0 && slot < kSlots) g_slots[slot].used.store(false, std::memory_order_release);
}

void install_interrupt_cleanup() {
  struct sigaction action {};
  action.sa_handler = on_interrupt;
  sigemptyset(&action.sa_mask);
  action.sa_flags = 0;
  ::sigaction(SIGINT, &action, nullptr);
  ::sigaction(SIGTERM, &action, nullptr);
}

bool same_file(const std::string& a, const std::string& b) {
  std::error_code ec;
  if (fs::exists(a, ec) && fs::exists(b, ec)) {
    const bool same = fs::equivalent(a, b, ec);
    if (!ec) return same;
  }
  const fs::path ca = fs::weakly_canonical(fs::absolute(a, ec), ec);
  const fs::path cb = fs::weakly_canonical(fs::absolute(b, ec), ec);
  return ca == cb;
}

std::string temporary_sibling(const std::string& path) {
  return path + kTemporaryMarker + std::to_string(static_cast<long long>(::getpid()));
}

long long temporary_owner(const std::string& path) {
  const std::string name = fs::path(path).filename().string();
  const std::size_t at_marker = name.rfind(kTemporaryMarker);
  if (at_marker == std::string::npos || at_marker == 0) return -1;
  const std::string digits = name.substr(at_marker + std::strlen(kTemporaryMarker));
  if (digits.empty() || digits.size() > 9) return -1;
  for (char c : digits)
    if (c < '0' || c > '9') return -1;
  return std::stoll(digits);
}

bool process_running(long long pid) {
  if (pid <= 0) return false;
  return ::kill(static_cast<pid_t>(pid), 0) == 0 || errno != ESRCH;
}

std::string input_file_problem(const std::string& path) {
  struct stat info {};
  if (::stat(path.c_str(), &info) != 0) {
    const int e = errno;
    if (e == ENOENT || e == ENOTDIR) return "no such file";
    return std::string("cannot open: ") + std::strerror(e);
  }
  if (S_ISREG(info.st_mode)) {
    if (::access(path.c_str(), R_OK) != 0) return "cannot open: permission denied";
    return "";
  }
  if (S_ISDIR(info.st_mode)) return "is a folder, not a file";
  if (S_ISFIFO(info.st_mode)) return "is a FIFO (named pipe), not a regular file";
  if (S_ISCHR(info.st_mode) || S_ISBLK(info.st_mode)) return "is a device, not a regular file";
  if (S_ISSOCK(info.st_mode)) return "is a socket, not a regular file";
  return "is not a regular file";
}

void refuse_temporary_as_input(const std::string& path, const std::string& option) {
  const long long owner = temporary_owner(path);
  if (owner < 0) return;
  throw InputError(at(path, option), "is an unfinished temporary output of process " + std::to_string(owner) +
                                         (process_running(owner) ? " (still running)" : " (no longer running: stale)") +
                                         ", never a result; delete it or wait for that process");
}

std::string stale_temporaries_note(const std::string& folder) {
  std::error_code ec;
  const fs::path dir = folder.empty() ? fs::path(".") : fs::path(folder);
  std::ostringstream note;
  int count = 0;
  for (fs::directory_iterator it(dir, ec), end; !ec && it != end; it.increment(ec)) {
    const std::string name = it->path().string();
    const long long owner = temporary_owner(name);
    if (owner < 0 || process_running(owner)) continue;
    if (++count > 10) continue;
    note << "note: " << name << ": stale temporary of process " << owner
         << " (no longer running; an interrupted write, not a result): safe to delete\n";
  }
  if (count > 10) note << "note: " << count - 10 << " more stale temporaries in " << dir.string() << "\n";
  return note.str();
}

void write_whole_file(const std::string& path, const std::string& text, const std::string& option) {
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out << text;
  out.close();
  if (!out) throw InputError(at(path, option), std::string("cannot write file: ") + std::strerror(errno));
}

// ---------------------------------------------------------------- OutputSet

OutputSet::~OutputSet() { discard(); }

OutputSet& OutputSet::input(const std::string& path, const std::string& option) {
  if (!path.empty()) inputs_.push_back({path, option});
  return *this;
}

OutputSet& OutputSet::output(const std::string& path, const std::string& option) {
  if (path.empty() && option == "-o") throw InputError(at("", option), "an output file name is required");
  if (!path.empty()) outputs_.push_back({path, option});
  return *this;
}

void OutputSet::check_output(const Entry& out, std::size_t index) const {
  const fs::path p(out.path);
  for (const auto& in : inputs_)
    if (same_file(out.path, in.path))
      throw InputError(at(out.path, out.option), "is also an input (" + in.option + " " + in.path +
                                                     "): an output never replaces an input, --force or not");
  for (std::size_t j = 0; j < outputs_.size(); ++j)
    if (j != index && same_file(out.path, outputs_[j].path))
      throw InputError(at(out.path, out.option),
                       "is also the output of " + outputs_[j].option + ": every output needs its own file");
  if (temporary_owner(out.path) >= 0)
    throw InputError(at(out.path, out.option), "has the form of a temporary (NAME.tmp.<pid>); choose another name");
  std::error_code ec;
  const fs::path folder = p.has_parent_path() ? p.parent_path() : fs::path(".");
  if (!fs::is_directory(folder, ec))
    throw InputError(at(out.path, out.option), "folder '" + folder.string() + "' does not exist");
  if (::access(folder.c_str(), W_OK | X_OK) != 0)
    throw InputError(at(out.path, out.option), "folder '" + folder.string() + "' is not writable");
  const fs::file_status status = fs::status(p, ec);
  if (fs::is_directory(status)) throw InputError(at(out.path, out.option), "is a folder");
  if (fs::exists(status) && !fs::is_regular_file(status))
    throw InputError(at(out.path, out.option), "exists and is not a regular file (a device, FIFO or socket)");
  if (fs::exists(fs::symlink_status(p, ec)) && !force_)
    throw InputError(at(out.path, out.option), "file exists (use --force to overwrite)");
}

const OutputSet::Entry* OutputSet::find_output(const std::string& path) const {
  for (const auto& out : outputs_)
    if (out.path == path) return &out;
  return nullptr;
}

void OutputSet::check() const {
  for (std::size_t i = 0; i < outputs_.size(); ++i) check_output(outputs_[i], i);
}

void OutputSet::stage(const std::string& path, const std::function<void(const std::string& temporary)>& write) {
  const Entry* out = find_output(path);
  if (!out) throw std::logic_error("OutputSet::stage: output not declared: " + path);
  check_output(*out, static_cast<std::size_t>(out - outputs_.data()));
  Staged s{path, temporary_sibling(path), out->option, -1};
  s.slot = register_temporary(s.temporary);
  staged_.push_back(s);
  try {
    write(s.temporary);
  } catch (...) {
    discard();
    throw;
  }
}

void OutputSet::stage_text(const std::string& path, const std::string& text) {
  const Entry* out = find_output(path);
  const std::string option = out ? out->option : "";
  stage(path, [&](const std::string& temporary) { write_whole_file(temporary, text, option); });
}

void OutputSet::discard() {
  for (auto& s : staged_) {
    std::remove(s.temporary.c_str());
    unregister_temporary(s.slot);
  }
  staged_.clear();
}

void OutputSet::commit() {
  // Every temporary is complete here; check once more that no name was taken
  // meanwhile, so that either all outputs appear or none.
  if (!force_)
    for (const auto& s : staged_) {
      std::error_code ec;
      if (fs::exists(fs::symlink_status(s.path, ec))) {
        const std::string path = s.path, option = s.option;
        discard();
        throw InputError(at(path, option), "file exists (use --force to overwrite)");
      }
    }
  while (!staged_.empty()) {
    Staged s = staged_.front();
    int e = 0;
    if (force_) {
      if (std::rename(s.temporary.c_str(), s.path.c_str()) != 0) e = errno;
    } else if (::link(s.temporary.c_str(), s.path.c_str()) != 0) {
      // link() fails with EEXIST if the name was taken: never replaces a file.
      e = errno;
    } else {
      std::remove(s.temporary.c_str());
    }
    unregister_temporary(s.slot);
    staged_.erase(staged_.begin());
    if (e != 0) {
      std::remove(s.temporary.c_str());
      discard();
      if (e == EEXIST) throw InputError(at(s.path, s.option), "file exists (use --force to overwrite)");
      throw InputError(at(s.path, s.option), std::string("cannot write: ") + std::strerror(e));
    }
  }
}

}  // namespace sigmatube

// SPDX-License-Identifier: MIT
// The one output policy (core/output_policy.h, docs/result-file.md "Output
// policy"): outputs never replace inputs or each other, --force or not; all
// outputs of a command appear together or not at all; SIGINT/SIGTERM remove
// this process's temporaries with one line and exit 130/143; stale
// temporaries are noted and never read as results.
#include <gtest/gtest.h>
#include <signal.h>
#include <sys/wait.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

#include "command_line.h"
#include "sigmatube/core/error.h"
#include "sigmatube/core/output_policy.h"

namespace {

namespace fs = std::filesystem;
using namespace sigmatube;
using sigmatube::testing::count_lines;
using sigmatube::testing::run_command;

// A process id above any Linux pid_max (at most 2^22): never a running process.
constexpr long long kDeadPid = 99999999;

struct Folder {
  fs::path path;
  explicit Folder(const std::string& name)
      : path(fs::temp_directory_path() / ("sigmatube_policy_" + name + "_" + std::to_string(::getpid()))) {
    fs::remove_all(path);
    fs::create_directories(path);
  }
  ~Folder() { fs::remove_all(path); }
  std::string operator/(const std::string& name) const { return (path / name).string(); }
};

std::string content(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream out;
  out << in.rdbuf();
  return out.str();
}

void write(const std::string& path, const std::string& text) { std::ofstream(path, std::ios::binary) << text; }

bool no_temporaries(const fs::path& folder) {
  for (const auto& entry : fs::directory_iterator(folder))
    if (temporary_owner(entry.path().string()) >= 0) return false;
  return true;
}

std::string demo_case() { return std::string(SIGMATUBE_SOURCE_DIR) + "/tests/cases/hcw_minimal.toml"; }

TEST(OutputPolicy, SameFileSeesThroughLinksAndDots) {
  const Folder f("same");
  write(f / "a.txt", "a");
  fs::create_symlink(f / "a.txt", f / "link.txt");
  fs::create_hard_link(f / "a.txt", f / "hard.txt");
  EXPECT_TRUE(same_file(f / "a.txt", f / "link.txt"));
  EXPECT_TRUE(same_file(f / "a.txt", f / "hard.txt"));
  EXPECT_TRUE(same_file(f / "a.txt", (f.path / "." / "a.txt").string()));
  EXPECT_TRUE(same_file(f / "new.txt", (f.path / "x" / ".." / "new.txt").string()));
  EXPECT_FALSE(same_file(f / "a.txt", f / "new.txt"));
}

TEST(OutputPolicy, AnOutputThatIsAnInputIsRefusedEvenWithForce) {
  const Folder f("input");
  write(f / "case.toml", "precious");
  fs::create_symlink(f / "case.toml", f / "alias.h5");
  for (const std::string out : {f / "case.toml", f / "alias.h5"}) {
    OutputSet outputs(true);
    outputs.input(f / "case.toml", "CASE").output(out, "-o");
    try {
      outputs.check();
      ADD_FAILURE() << out << " was accepted";
    } catch (const InputError& e) {
      EXPECT_NE(std::string(e.what()).find("is also an input (CASE"), std::string::npos) << e.what();
    }
  }
  EXPECT_EQ(content(f / "case.toml"), "precious");
}

TEST(OutputPolicy, TwoOutputsOnOneFileAreRefused) {
  const Folder f("twice");
  OutputSet outputs(false);
  outputs.output(f / "out.h5", "-o").output(f / "out.h5", "--json");
  EXPECT_THROW(outputs.check(), InputError);
}

TEST(OutputPolicy, AFailingSiblingLeavesNoOutputBehind) {
  const Folder f("sibling");
  OutputSet outputs(false);
  outputs.output(f / "out.h5", "-o").output(f / "side.json", "--json");
  outputs.check();
  outputs.stage_text(f / "out.h5", "result");
  EXPECT_THROW(outputs.stage(f / "side.json", [](const std::string&) { throw InputError("cannot write"); }), InputError);
  EXPECT_FALSE(fs::exists(f / "out.h5"));
  EXPECT_TRUE(no_temporaries(f.path));
}

TEST(OutputPolicy, CommitPublishesEveryOutputAndNeverReplacesWithoutForce) {
  const Folder f("commit");
  {
    OutputSet outputs(false);
    outputs.output(f / "a.txt", "-o").output(f / "b.txt", "--json");
    outputs.stage_text(f / "a.txt", "A");
    outputs.stage_text(f / "b.txt", "B");
    outputs.commit();
  }
  EXPECT_EQ(content(f / "a.txt"), "A");
  EXPECT_EQ(content(f / "b.txt"), "B");
  EXPECT_TRUE(no_temporaries(f.path));
  OutputSet again(false);
  again.output(f / "a.txt", "-o");
  EXPECT_THROW(again.check(), InputError);
  OutputSet forced(true);
  forced.output(f / "a.txt", "-o");
  forced.stage_text(f / "a.txt", "A2");
  forced.commit();
  EXPECT_EQ(content(f / "a.txt"), "A2");
}

TEST(OutputPolicy, DevicesAndTemporaryNamesAreNotOutputs) {
  const Folder f("device");
  OutputSet device(true);
  device.output("/dev/null", "--json");
  EXPECT_THROW(device.check(), InputError);
  OutputSet temporary(true);
  temporary.output(f / "out.h5.tmp.123", "-o");
  EXPECT_THROW(temporary.check(), InputError);
}

TEST(OutputPolicy, TemporaryNamesAndStaleNotes) {
  EXPECT_EQ(temporary_owner("/x/out.h5.tmp.4242"), 4242);
  EXPECT_EQ(temporary_owner("/x/out.h5"), -1);
  EXPECT_EQ(temporary_owner("/x/out.h5.tmp.12a"), -1);
  EXPECT_TRUE(process_running(::getpid()));
  EXPECT_FALSE(process_running(kDeadPid));
  const Folder f("stale");
  const std::string stale = f / ("r.h5.tmp." + std::to_string(kDeadPid));
  write(stale, "half");
  const std::string note = stale_temporaries_note(f.path.string());
  EXPECT_NE(note.find(stale), std::string::npos) << note;
  EXPECT_NE(note.find("stale"), std::string::npos) << note;
  EXPECT_THROW(refuse_temporary_as_input(stale, ""), InputError);
  // And through the command line: noted by show, never read as a result.
  const auto shown = run_command("show '" + stale + "'");
  EXPECT_EQ(shown.exit_code, 2);
  EXPECT_EQ(count_lines(shown.stderr_text), 1) << shown.stderr_text;
  EXPECT_NE(shown.stderr_text.find("unfinished temporary"), std::string::npos) << shown.stderr_text;
}

// A child registers a temporary and receives the signal: the temporary is
// gone, the exit code is 128 + signal.
void expect_interrupt_cleanup(int signal_number) {
  const Folder f("signal" + std::to_string(signal_number));
  const std::string temporary = f / "out.h5.tmp.child";
  const pid_t child = ::fork();
  ASSERT_GE(child, 0);
  if (child == 0) {
    install_interrupt_cleanup();
    write(temporary, "partial");
    (void)register_temporary(temporary);
    ::raise(signal_number);
    ::_exit(0);
  }
  int status = 0;
  ::waitpid(child, &status, 0);
  ASSERT_TRUE(WIFEXITED(status));
  EXPECT_EQ(WEXITSTATUS(status), 128 + signal_number);
  EXPECT_FALSE(fs::exists(temporary));
}

TEST(OutputPolicy, InterruptRemovesTemporariesAndExits130) { expect_interrupt_cleanup(SIGINT); }
TEST(OutputPolicy, TerminateRemovesTemporariesAndExits143) { expect_interrupt_cleanup(SIGTERM); }

// The audit's reproducers through the command line: each is exit 2 with one
// line, the input intact, no output and no temporary left.
TEST(OutputPolicy, CommandLineNeverWritesOverItsInputs) {
  const Folder f("cli");
  const std::string case_copy = f / "case.toml";
  fs::copy_file(demo_case(), case_copy);
  fs::copy_file(std::string(SIGMATUBE_SOURCE_DIR) + "/tests/cases/hcw_minimal_plan.csv", f / "hcw_minimal_plan.csv");
  const std::string original = content(case_copy);
  const std::string plan = f / "hcw_minimal_plan.csv";
  const std::string plan_text = content(plan);
  // A small result to read from.
  const std::string result = f / "r.h5";
  ASSERT_EQ(run_command("simulate '" + case_copy + "' -o '" + result + "' --quiet").exit_code, 0);
  const std::string result_bytes = content(result);
  fs::create_symlink(case_copy, f / "case-link.h5");
  const std::string q = "'";
  const std::vector<std::string> commands = {
      "run " + q + case_copy + q + " -o " + q + case_copy + q + " --force --mc-runs 0",
      "run " + q + case_copy + q + " -o " + q + (f / "case-link.h5") + q + " --force --mc-runs 0",
      "simulate " + q + case_copy + q + " -o " + q + plan + q + " --force",
      "simulate " + q + case_copy + q + " -o " + q + (f / "n.h5") + q + " --csv " + q + case_copy + q + " --force",
      "run " + q + case_copy + q + " -o " + q + (f / "o.h5") + q + " --json " + q + case_copy + q + " --force --mc-runs 0",
      "report " + q + result + q + " -o " + q + result + q + " --force",
      "show " + q + result + q + " --json " + q + result + q + " --force",
      "compare " + q + result + q + " " + q + result + q + " --junit " + q + result + q + " --force",
      "compare " + q + result + q + " " + q + result + q + " --json " + q + result + q + " --force",
      "run " + q + case_copy + q + " -o " + q + (f / "same.h5") + q + " --json " + q + (f / "same.h5") + q +
          " --mc-runs 0",
      "run " + q + case_copy + q + " -o " + q + (f / "p.h5") + q + " --json " + q + (f / "no-folder/s.json") + q +
          " --mc-runs 0",
  };
  for (const auto& command : commands) {
    const auto run = run_command(command + " --quiet");
    SCOPED_TRACE(command + "\n" + run.stderr_text);
    EXPECT_EQ(run.exit_code, 2);
    EXPECT_EQ(count_lines(run.stderr_text), 1);
    EXPECT_EQ(content(case_copy), original);
    EXPECT_EQ(content(plan), plan_text);
    EXPECT_EQ(content(result), result_bytes);
    EXPECT_TRUE(no_temporaries(f.path));
  }
  for (const std::string name : {"n.h5", "o.h5", "same.h5", "p.h5"}) EXPECT_FALSE(fs::exists(f / name)) << name;
}

}  // namespace

// SPDX-License-Identifier: MIT
// docs/commands.md is the reference of the command line: every command the
// program offers (from `sigmatube --help`) has a section headed
// "## `sigmatube <command>`", and every option of that command (from
// `sigmatube <command> --help`, CLI11's own listing) is named in it as `--option`
// (short forms as `-x`). A new command or option without documentation fails here.
#include <gtest/gtest.h>

#include <algorithm>
#include <cstdio>
#include <fstream>
#include <memory>
#include <regex>
#include <set>
#include <sstream>
#include <string>
#include <vector>

namespace {

std::string capture(const std::string& command) {
  std::unique_ptr<FILE, int (*)(FILE*)> pipe(::popen(command.c_str(), "r"), ::pclose);
  std::string out;
  if (!pipe) return out;
  char buffer[4096];
  std::size_t n;
  while ((n = std::fread(buffer, 1, sizeof buffer, pipe.get())) > 0) out.append(buffer, n);
  return out;
}

std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  return lines;
}

/// The entries of one section of CLI11's help ("Subcommands:", "Options:"):
/// the first word of each indented line up to the next blank line.
std::vector<std::string> section_words(const std::string& help, const std::string& title) {
  std::vector<std::string> words;
  bool inside = false;
  for (const std::string& line : lines_of(help)) {
    if (line.rfind(title, 0) == 0) {
      inside = true;
      continue;
    }
    if (!inside) continue;
    if (line.empty() || line[0] != ' ') {
      inside = false;
      continue;
    }
    std::istringstream in(line);
    std::string word;
    if (in >> word) words.push_back(word);
  }
  return words;
}

std::string read_file(const std::string& path) {
  std::ifstream in(path);
  std::stringstream s;
  s << in.rdbuf();
  return s.str();
}

/// The text of the section "## `sigmatube <command>`" of the reference, or "" if absent.
std::string command_section(const std::string& doc, const std::string& command) {
  const std::string heading = "## `sigmatube " + command + "`";
  const std::size_t start = doc.find(heading);
  if (start == std::string::npos) return "";
  const std::size_t end = doc.find("\n## ", start + heading.size());
  return doc.substr(start, end == std::string::npos ? std::string::npos : end - start);
}

const std::string kCli = SIGMATUBE_CLI;
const std::string kReference = std::string(SIGMATUBE_SOURCE_DIR) + "/docs/commands.md";

std::vector<std::string> commands() { return section_words(capture(kCli + " --help 2>&1"), "Subcommands:"); }

TEST(DocsCoverage, TheProgramListsItsCommands) {
  const std::vector<std::string> list = commands();
  // The commands of README.md's exit-code paragraph at least; a parser that
  // found none would make the tests below vacuous.
  ASSERT_GE(list.size(), 7u);
  EXPECT_NE(std::find(list.begin(), list.end(), "run"), list.end());
}

TEST(DocsCoverage, EveryCommandAndOptionIsInTheReference) {
  const std::string doc = read_file(kReference);
  ASSERT_FALSE(doc.empty()) << kReference;
  for (const std::string& command : commands()) {
    const std::string section = command_section(doc, command);
    EXPECT_FALSE(section.empty()) << "docs/commands.md has no section \"## `sigmatube " << command << "`\"";
    if (section.empty()) continue;
    const std::string help = capture(kCli + " " + command + " --help 2>&1");
    const std::vector<std::string> options = section_words(help, "Options:");
    EXPECT_FALSE(options.empty()) << command << ": no options parsed from --help";
    for (const std::string& entry : options) {
      // "-o,--output" → "-o", "--output"
      std::stringstream names(entry);
      for (std::string name; std::getline(names, name, ',');) {
        if (name.empty() || name[0] != '-' || name == "-h" || name == "--help") continue;
        EXPECT_NE(section.find("`" + name), std::string::npos)
            << "docs/commands.md, section sigmatube " << command << ": option " << name << " is not documented";
      }
    }
    // Positionals (CASE, RESULT, ...) are named too.
    for (const std::string& positional : section_words(help, "Positionals:"))
      EXPECT_NE(section.find(positional), std::string::npos)
          << "docs/commands.md, section sigmatube " << command << ": argument " << positional << " is not named";
  }
}

TEST(DocsCoverage, TheProgramsOwnOptionsAreInTheReference) {
  const std::string doc = read_file(kReference);
  for (const std::string& entry : section_words(capture(kCli + " --help 2>&1"), "Options:")) {
    std::stringstream names(entry);
    for (std::string name; std::getline(names, name, ',');)
      if (!name.empty() && name[0] == '-' && name != "-h" && name != "--help")
        EXPECT_NE(doc.find("`" + name), std::string::npos) << "docs/commands.md: option " << name << " is not documented";
  }
}

}  // namespace

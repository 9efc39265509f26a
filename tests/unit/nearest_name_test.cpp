// SPDX-License-Identifier: MIT
#include "sigmatube/casefile/nearest_name.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <string>
#include <vector>

using namespace sigmatube::casefile;

namespace {

// Textbook examples of the edit distance (from memory; they are the standard
// illustrations: kitten→sitting needs k→s, e→i and an inserted g).
TEST(LevenshteinDistance, MatchesClassicExamples) {
  EXPECT_EQ(levenshtein_distance("kitten", "sitting"), 3u);
  EXPECT_EQ(levenshtein_distance("flaw", "lawn"), 2u);
  EXPECT_EQ(levenshtein_distance("", "abc"), 3u);
  EXPECT_EQ(levenshtein_distance("abc", ""), 3u);
  EXPECT_EQ(levenshtein_distance("same", "same"), 0u);
  // Plain Levenshtein counts a transposition as two edits.
  EXPECT_EQ(levenshtein_distance("raduis", "radius"), 2u);
}

// The recursive definition itself, exponential but independent of the two-row
// recurrence under test.
std::size_t definition(const std::string& a, const std::string& b) {
  if (a.empty()) return b.size();
  if (b.empty()) return a.size();
  const std::string ta = a.substr(1), tb = b.substr(1);
  if (a[0] == b[0]) return definition(ta, tb);
  return 1 + std::min({definition(ta, b), definition(a, tb), definition(ta, tb)});
}

TEST(LevenshteinDistance, AgreesWithRecursiveDefinitionOnShortWords) {
  const std::vector<std::string> words = {"", "a", "ab", "ba", "abc", "acb", "lqr", "rk4", "beta", "gamma", "mode"};
  for (const auto& a : words)
    for (const auto& b : words) EXPECT_EQ(levenshtein_distance(a, b), definition(a, b)) << a << " / " << b;
}

TEST(LevenshteinDistance, IsSymmetric) {
  EXPECT_EQ(levenshtein_distance("correlation_time", "corelation_tme"),
            levenshtein_distance("corelation_tme", "correlation_time"));
}

TEST(NearestName, SuggestsTheClosestCandidate) {
  const std::vector<std::string> keys = {"position", "center", "radius", "window"};
  EXPECT_EQ(nearest_name("raduis", keys), "radius");
  EXPECT_EQ(nearest_name("centre", keys), "center");
  EXPECT_EQ(nearest_name("positon", keys), "position");
}

TEST(NearestName, IgnoresCaseWhenComparing) {
  EXPECT_EQ(nearest_name("LQR", {"lqr", "gain", "open-loop"}), "lqr");
}

TEST(NearestName, ReturnsEmptyWhenNothingIsClose) {
  EXPECT_EQ(nearest_name("temperature", {"radius", "center"}), "");
  // A one-letter word is not "close" to another one-letter word: nothing is shared.
  EXPECT_EQ(nearest_name("q", {"r"}), "");
  EXPECT_EQ(nearest_name("anything", {}), "");
}

TEST(NearestName, NeverSuggestsAnExactMatch) {
  EXPECT_EQ(nearest_name("radius", {"radius", "radii"}), "");
}

TEST(NearestName, TiesGoToTheEarlierCandidate) {
  EXPECT_EQ(nearest_name("aq", {"ax", "ay", "az"}), "ax");
}

TEST(DidYouMean, FormatsTheSuggestionOrNothing) {
  EXPECT_EQ(did_you_mean("raduis", {"radius"}), " (did you mean 'radius'?)");
  EXPECT_EQ(did_you_mean("xyz", {"radius"}), "");
}

TEST(JoinNames, SeparatesWithCommas) {
  EXPECT_EQ(join_names({"a", "b", "c"}), "a, b, c");
  EXPECT_EQ(join_names({}), "");
}

}  // namespace

// SPDX-License-Identifier: MIT
#include "sigmatube/result/junit.h"

#include <gtest/gtest.h>

#include <fstream>

#include "result_fixture.h"

namespace sigmatube::result {
namespace {

using testing::run_python;
using testing::TemporaryFolder;

TEST(JUnit, EscapesEverythingAndCountsFailuresAndSkips) {
  TemporaryFolder folder;
  std::vector<JUnitCase> cases(3);
  cases[0].classname = "case <one> & \"two\"";
  cases[0].name = "keep-out";
  cases[0].time_in_seconds = 1.25;
  cases[1].classname = "case 2";
  cases[1].name = "corridor ]]> 'x'";
  cases[1].failed = true;
  cases[1].failure_message = "p < bound? no & \x02";
  cases[1].failure_text = "detail\n<tag/>";
  cases[2].classname = "case 3";
  cases[2].name = "skipped one";
  cases[2].skipped = true;
  cases[2].skipped_message = "no Monte Carlo";
  std::ofstream(folder.path / "j.xml") << junit_xml(cases, "suite & <name>");
  // Reference parser: Python's xml.etree.ElementTree.
  const std::string out = run_python(
      "import xml.etree.ElementTree as ET\n"
      "root = ET.parse('" +
          (folder.path / "j.xml").string() +
          "').getroot()\n"
          "s = root.find('testsuite')\n"
          "c = s.findall('testcase')\n"
          "print(s.get('name'), s.get('tests'), s.get('failures'), s.get('skipped'), s.get('time'))\n"
          "print(c[0].get('classname'), c[1].get('name'), c[1].find('failure').get('message'))\n"
          "print(repr(c[1].find('failure').text), c[2].find('skipped').get('message'))\n",
      folder.path);
  EXPECT_EQ(out,
            "suite & <name> 3 1 1 1.250\n"
            "case <one> & \"two\" corridor ]]> 'x' p < bound? no & \n"
            "'detail\\n<tag/>' no Monte Carlo\n");
}

}  // namespace
}  // namespace sigmatube::result

// SPDX-License-Identifier: MIT
// `sigmatube export`: CSV time series with units in the header, read back by
// NumPy and by Python's csv module (the spreadsheet dialect), compared with the
// HDF5 datasets through h5py; existing files are refused without --force and
// nothing is written then.
#include "sigmatube/result/csv_export.h"

#include <gtest/gtest.h>

#include <sys/wait.h>

#include <filesystem>
#include <fstream>

#include "python_reference.h"
#include "result_fixture.h"
#include "sigmatube/app/analysis.h"
#include "sigmatube/app/case_loader.h"
#include "sigmatube/result/result_file.h"

using namespace sigmatube;
namespace fs = std::filesystem;

namespace {

int run_cli(const std::string& arguments) {
  const int status = std::system((std::string(SIGMATUBE_CLI) + " " + arguments + " >/dev/null 2>&1").c_str());
  return WIFEXITED(status) ? WEXITSTATUS(status) : -1;
}

// An invented scalar loop with two bounded inputs, a constraint and a tube.
fs::path make_result(const fs::path& folder) {
  std::ofstream(folder / "plan.csv") << "t,x,u\n0,0,0\n10,0,0\n";
  std::ofstream(folder / "case.toml")
      << "title = \"invented scalar loop\"\n"
         "[model]\nstates = [\"x\"]\ninputs = [\"u\"]\nrhs = { x = \"u\" }\nunits = { x = \"m\", u = \"m/s\" }\n"
         "[plan]\nfile = \"plan.csv\"\n[control]\nlaw = \"gain\"\ngain = [[0.5]]\n[simulation]\nreport_every = 1\n"
         "[[uncertain]]\nname = \"start\"\napplies_to = \"initial.x\"\ndistribution = \"uniform\"\nlow = -0.4\nhigh = 0.4\n"
         "[[uncertain]]\nname = \"push\"\napplies_to = \"disturbance.x\"\ndistribution = \"normal\"\nmean = 0\nstd = 0.05\n"
         "[[constraint]]\nname = \"stay-low\"\ntype = \"half-space\"\nposition = [\"x\"]\nnormal = [1]\noffset = 0.45\n"
         "max_probability = 0.01\n"
         "[surrogate]\nmethod = \"tensor-grid\"\ndegree = 2\nsamples = 4000\n[montecarlo]\nruns = 100\n"
         "[tube]\nposition = [\"x\"]\n";
  const app::LoadedCase loaded = app::load_case((folder / "case.toml").string());
  app::AnalysisOptions options;
  options.threads = 1;
  options.progress = false;
  const result::AnalysisResult r = app::analyze_case(loaded, options);
  const fs::path path = folder / "r.h5";
  result::write_result_file(r, path.string(), false);
  return path;
}

}  // namespace

TEST(CsvExport, FilesCarryUnitsAndMatchTheResultFile) {
  result::testing::TemporaryFolder folder;
  const fs::path h5 = make_result(folder.path);
  const fs::path out = folder.path / "csv";
  ASSERT_EQ(run_cli("export " + h5.string() + " -d " + out.string()), 0);
  for (const char* name : {"nominal.csv", "mean.csv", "std.csv", "quantiles.csv", "probabilities.csv", "tube.csv"})
    EXPECT_TRUE(fs::exists(out / name)) << name;
  const std::string report = result::testing::run_python(
      "import csv, h5py, numpy as np\n"
      "d = '" + out.string() + "/'\n"
      "f = h5py.File('" + h5.string() + "', 'r')\n"
      "def head(n):\n  return next(csv.reader(open(d + n)))\n"
      "print(head('nominal.csv'))\n"
      "print(head('tube.csv'))\n"
      "a = np.loadtxt(d + 'mean.csv', delimiter=',', skiprows=1)\n"
      "print('mean', bool(np.array_equal(a[:, 1:], f['/surrogate/mean'][...])), bool(np.array_equal(a[:, 0], f['/time'][...])))\n"
      "q = np.loadtxt(d + 'quantiles.csv', delimiter=',', skiprows=1)\n"
      "Q = f['/surrogate/quantiles'][...]\n"
      "print('quantiles', q.shape[1] == 1 + Q.shape[1] * Q.shape[2], bool(np.array_equal(q[:, 1:], Q.reshape(Q.shape[0], -1))))\n"
      "t = np.loadtxt(d + 'tube.csv', delimiter=',', skiprows=1)\n"
      "print('tube', bool(np.array_equal(t[:, 1], f['/tube/radius'][...])))\n"
      "p = np.loadtxt(d + 'probabilities.csv', delimiter=',', skiprows=1)\n"
      "print('prob', head('probabilities.csv')[1:], bool(np.allclose(p[:, 1], f['/constraints/stay-low/pointwise_probability'][...], equal_nan=True, rtol=0, atol=0)))\n",
      folder.path);
  EXPECT_EQ(report,
            "['t [s]', 'x [m]', 'cmd.u [m/s]']\n"
            "['t [s]', 'radius [m]', 'rate [1/s]']\n"
            "mean True True\n"
            "quantiles True True\n"
            "tube True\n"
            "prob ['stay-low surrogate', 'stay-low montecarlo'] True\n");
}

TEST(CsvExport, RefusesExistingFilesWithoutForceAndWritesNothing) {
  result::testing::TemporaryFolder folder;
  const fs::path h5 = make_result(folder.path);
  const fs::path out = folder.path / "csv";
  fs::create_directories(out);
  std::ofstream(out / "tube.csv") << "keep me\n";
  EXPECT_EQ(run_cli("export " + h5.string() + " -d " + out.string()), 2);
  EXPECT_FALSE(fs::exists(out / "nominal.csv"));  // checked before the first file is written
  std::ifstream in(out / "tube.csv");
  std::string line;
  std::getline(in, line);
  EXPECT_EQ(line, "keep me");
  EXPECT_EQ(run_cli("export " + h5.string() + " -d " + out.string() + " --force"), 0);
  EXPECT_TRUE(fs::exists(out / "nominal.csv"));
}

TEST(CsvExport, HeaderCellsQuoteCommasAsRfc4180) {
  // RFC 4180: a field containing a comma is enclosed in double quotes.
  result::AnalysisResult r;
  r.time = {0.0, 1.0};
  r.output_names = {"a,b"};
  r.output_units = {"m"};
  r.nominal_outputs = Eigen::MatrixXd::Constant(2, 1, 0.5);
  const auto files = result::csv_export(r);
  ASSERT_FALSE(files.empty());
  EXPECT_EQ(files[0].first, "nominal.csv");
  EXPECT_EQ(files[0].second, "t [s],\"a,b [m]\"\n0,0.5\n1,0.5\n");
}

TEST(NominalCsv, PrintsTheShortestDigitsThatReadBackExactly) {
  // `simulate --csv`. Reference: Python's repr of each float (shortest round-trip
  // digits since Python 3.1), through /usr/bin/python3 at test time, joined by commas.
  result::AnalysisResult r;
  r.time = {0.0, 0.1, 10.0};
  r.output_names = {"x", "vx"};
  r.nominal_outputs.resize(3, 2);
  r.nominal_outputs << 0.1, 1.0 / 3.0, 0.1 + 0.2, 8e-05, -2.5e-300, 20261201.5;
  const std::string expected =
      "t,x,vx\n" + sigmatube::test::python_output(
                       "for row in [(0.0, 0.1, 1/3), (0.1, 0.1 + 0.2, 8e-05), (10.0, -2.5e-300, 20261201.5)]:\n"
                       "  print(','.join(repr(v).removesuffix('.0') for v in row))\n");
  EXPECT_EQ(result::nominal_csv(r), expected);
  // Exact output, no binary-float artefact such as 0.10000000000000001 (by definition above).
  EXPECT_EQ(result::nominal_csv(r).substr(0, 32), "t,x,vx\n0,0.1,0.3333333333333333\n");
}

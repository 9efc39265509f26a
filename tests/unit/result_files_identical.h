// SPDX-License-Identifier: MIT
#pragma once
// Bitwise comparison of two result files with an independent HDF5 reader (h5py
// through SIGMATUBE_PYTHON): every dataset must exist in both with the same
// shape, type and bytes, and every attribute must match except created_utc
// (the wall-clock time of the run). Prints one line per difference and a final
// count of differences.
#include <string>
#include <vector>

#include <unistd.h>

#include <cstdio>
#include <fstream>
#include <stdexcept>

namespace sigmatube::test {

inline std::string result_files_program(const std::string& a, const std::string& b) {
  return R"PY(
import h5py, numpy as np
)PY" "a_path, b_path = r'" + a + "', r'" + b + R"PY('
diff = 0
def items(f):
    out = {}
    def visit(name, obj):
        out[name] = obj
    f.visititems(visit)
    return out
def attrs(obj):
    return {k: obj.attrs[k] for k in obj.attrs if k != 'created_utc'}
def same(x, y):
    x, y = np.asarray(x), np.asarray(y)
    if x.shape != y.shape or x.dtype != y.dtype:
        return False
    if x.dtype.kind in 'biufc':
        return np.ascontiguousarray(x).tobytes() == np.ascontiguousarray(y).tobytes()
    return np.array_equal(x, y)
with h5py.File(a_path, 'r') as fa, h5py.File(b_path, 'r') as fb:
    ia, ib = items(fa), items(fb)
    ia[''] = fa; ib[''] = fb
    for name in sorted(set(ia) | set(ib)):
        if name not in ia or name not in ib:
            print('# only in one file:', name); diff += 1; continue
        oa, ob = ia[name], ib[name]
        if isinstance(oa, h5py.Dataset) != isinstance(ob, h5py.Dataset):
            print('# kind differs:', name); diff += 1; continue
        if isinstance(oa, h5py.Dataset) and not same(oa[()], ob[()]):
            print('# dataset differs:', name); diff += 1
        ka, kb = attrs(oa), attrs(ob)
        if set(ka) != set(kb) or any(not same(ka[k], kb[k]) for k in ka):
            print('# attributes differ:', name); diff += 1
print(diff)
)PY";
}

struct FileComparison {
  int differences = -1;  // −1: the comparison did not run
  std::string report;    // what differs, one line each
};

/// Compares two result files (see above).
inline FileComparison compare_result_files(const std::string& a, const std::string& b) {
  static int counter = 0;
  const std::string path = "/tmp/sigmatube_compare_" + std::to_string(::getpid()) + "_" + std::to_string(counter++) + ".py";
  {
    std::ofstream file(path);
    file << result_files_program(a, b);
  }
  const std::string command = std::string(SIGMATUBE_PYTHON) + " " + path + " 2>&1";
  FileComparison out;
  FILE* pipe = ::popen(command.c_str(), "r");
  if (!pipe) return out;
  char buffer[4096];
  while (std::fgets(buffer, sizeof buffer, pipe)) out.report += buffer;
  const int status = ::pclose(pipe);
  std::remove(path.c_str());
  if (status != 0) return out;
  const auto last = out.report.find_last_not_of(" \n");
  const auto start = out.report.find_last_of('\n', last);
  try {
    out.differences = std::stoi(out.report.substr(start == std::string::npos ? 0 : start + 1));
  } catch (const std::exception&) {
    out.differences = -1;
  }
  return out;
}

}  // namespace sigmatube::test

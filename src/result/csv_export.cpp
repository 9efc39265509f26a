// SPDX-License-Identifier: MIT
#include "sigmatube/result/csv_export.h"

#include <cmath>
#include <filesystem>
#include <sstream>

#include "sigmatube/core/error.h"
#include "sigmatube/core/output_policy.h"
#include "sigmatube/result/number_format.h"
#include "sigmatube/result/result_file.h"

namespace sigmatube::result {
namespace {

namespace fs = std::filesystem;

std::string number(double v) { return format_shortest(v); }

// "name [unit]" ("name" when the unit is unknown). Commas and quotes in names
// are quoted as RFC 4180 says.
std::string header_cell(const std::string& name, const std::string& unit) {
  std::string cell = unit.empty() ? name : name + " [" + unit + "]";
  if (cell.find_first_of(",\"\n") == std::string::npos) return cell;
  std::string quoted = "\"";
  for (char c : cell) quoted += c == '"' ? std::string("\"\"") : std::string(1, c);
  return quoted + "\"";
}

std::string unit_of(const AnalysisResult& r, std::size_t output) {
  return output < r.output_units.size() ? r.output_units[output] : "";
}

// One CSV table: t then `columns` values per report time (value(k, column)).
template <class Value>
std::string table(const AnalysisResult& r, const std::vector<std::string>& header, Value value,
                  const char* time_header = "t [s]") {
  std::ostringstream out;
  out << time_header;
  for (const auto& h : header) out << ',' << h;
  out << '\n';
  for (std::size_t k = 0; k < r.time.size(); ++k) {
    out << number(r.time[k]);
    for (std::size_t c = 0; c < header.size(); ++c) out << ',' << number(value(static_cast<Eigen::Index>(k), c));
    out << '\n';
  }
  return out.str();
}

std::string level_text(double level) {
  std::ostringstream s;
  s << "q" << level;
  return s.str();
}

}  // namespace

std::string nominal_csv(const AnalysisResult& nominal) {
  return table(
      nominal, nominal.output_names,
      [&](Eigen::Index k, std::size_t c) { return nominal.nominal_outputs(k, static_cast<Eigen::Index>(c)); }, "t");
}

std::vector<std::pair<std::string, std::string>> csv_export(const AnalysisResult& r) {
  std::vector<std::pair<std::string, std::string>> files;
  const std::size_t n_out = r.output_names.size();
  std::vector<std::string> outputs;
  for (std::size_t o = 0; o < n_out; ++o) outputs.push_back(header_cell(r.output_names[o], unit_of(r, o)));
  const auto matrix_table = [&](const Eigen::MatrixXd& m) {
    return table(r, outputs, [&](Eigen::Index k, std::size_t c) { return m(k, static_cast<Eigen::Index>(c)); });
  };
  files.emplace_back("nominal.csv", matrix_table(r.nominal_outputs));
  const SurrogateResult& s = r.surrogate;
  if (s.done && s.mean.rows() == static_cast<Eigen::Index>(r.time.size())) {
    files.emplace_back("mean.csv", matrix_table(s.mean));
    files.emplace_back("std.csv", matrix_table(s.std));
  }
  if (s.done && s.quantiles.size() == r.time.size() && !s.quantile_levels.empty()) {
    std::vector<std::string> header;
    for (std::size_t o = 0; o < n_out; ++o)
      for (double level : s.quantile_levels)
        header.push_back(header_cell(r.output_names[o] + " " + level_text(level), unit_of(r, o)));
    const std::size_t k_levels = s.quantile_levels.size();
    files.emplace_back("quantiles.csv", table(r, header, [&](Eigen::Index k, std::size_t c) {
                         return s.quantiles[static_cast<std::size_t>(k)](static_cast<Eigen::Index>(c / k_levels),
                                                                         static_cast<Eigen::Index>(c % k_levels));
                       }));
  }
  if (!r.constraints.empty()) {
    std::vector<std::string> header;
    std::vector<const Eigen::VectorXd*> columns;
    for (const auto& c : r.constraints) {
      header.push_back(header_cell(c.name + " surrogate", ""));
      columns.push_back(&c.pointwise_probability);
      if (c.has_montecarlo) {
        header.push_back(header_cell(c.name + " montecarlo", ""));
        columns.push_back(&c.montecarlo.pointwise_probability);
      }
    }
    files.emplace_back("probabilities.csv", table(r, header, [&](Eigen::Index k, std::size_t c) {
                         const Eigen::VectorXd& v = *columns[c];
                         return k < v.size() ? v[k] : kNaN;
                       }));
  }
  if (r.tube.done) {
    const std::vector<std::string> header{header_cell("radius", r.tube.units), header_cell("rate", "1/s")};
    files.emplace_back("tube.csv", table(r, header, [&](Eigen::Index k, std::size_t c) {
                         const Eigen::VectorXd& v = c == 0 ? r.tube.radius : r.tube.rate;
                         return k < v.size() ? v[k] : kNaN;
                       }));
  }
  return files;
}

std::vector<std::string> write_csv_export(const AnalysisResult& result, const std::string& directory,
                                          const std::string& input_path, bool force) {
  if (directory.empty()) throw InputError(SourceLocation{"", 0, "-d"}, "an output folder is required");
  const auto files = csv_export(result);
  std::error_code ec;
  if (fs::exists(directory, ec) && !fs::is_directory(directory, ec))
    throw InputError(SourceLocation{directory, 0, "-d"}, "is not a folder");
  // One output policy (core/output_policy.h): no CSV may be the result read,
  // an existing file only with --force, all files complete or none.
  fs::create_directories(directory, ec);
  if (ec || !fs::is_directory(directory))
    throw InputError(SourceLocation{directory, 0, "-d"}, "cannot create the folder");
  OutputSet outputs(force);
  outputs.input(input_path, "RESULT");
  std::vector<std::string> paths;
  for (const auto& entry : files) {
    paths.push_back((fs::path(directory) / entry.first).string());
    outputs.output(paths.back(), "-d");
  }
  outputs.check();
  for (std::size_t i = 0; i < files.size(); ++i) outputs.stage_text(paths[i], files[i].second);
  outputs.commit();
  return paths;
}

}  // namespace sigmatube::result

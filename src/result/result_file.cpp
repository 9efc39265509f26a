// SPDX-License-Identifier: MIT
#include "sigmatube/result/result_file.h"

#include <H5Cpp.h>
#include <unistd.h>

#include <cerrno>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "sigmatube/core/error.h"
#include "sigmatube/core/output_policy.h"
#include "sigmatube/core/sha256.h"

namespace sigmatube::result {
namespace {

namespace fs = std::filesystem;
using RowMajorMatrix = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;
using IndexMatrix = Eigen::Matrix<int, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;

// ---------------------------------------------------------------- checksum
//
// The first kChecksumBlockBytes of a result file are an HDF5 user block (HDF5
// itself never reads it). Once the HDF5 file is closed, seal() writes into it
// the SHA-256 and length of every byte after it: all datasets, attributes and
// HDF5 metadata, whatever groups other code adds. verify() checks both before
// the HDF5 library parses anything, so a corrupted file never reaches it.

constexpr hsize_t kChecksumBlockBytes = 512;
constexpr const char* kChecksumMagic = "sigmatube result checksum v1\n";
constexpr const char kHdf5Signature[8] = {'\x89', 'H', 'D', 'F', '\r', '\n', '\x1a', '\n'};

std::string read_file_bytes(const std::string& path, const std::string& option) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(SourceLocation{path, 0, option}, std::string("cannot open: ") + std::strerror(errno));
  std::ostringstream bytes;
  bytes << in.rdbuf();
  if (in.bad()) throw InputError(SourceLocation{path, 0, option}, "cannot read the file");
  return bytes.str();
}

// The whole block, text then NUL padding: the only form verify() accepts.
std::string checksum_block(const std::string& sha, unsigned long long length) {
  std::string block = std::string(kChecksumMagic) + "sha256 " + sha + "\nbytes " + std::to_string(length) + "\n";
  block.resize(kChecksumBlockBytes, '\0');
  return block;
}

void seal(const std::string& path) {
  std::string bytes = read_file_bytes(path, "-o");
  if (bytes.size() < kChecksumBlockBytes) throw std::logic_error("seal: result file shorter than its checksum block");
  const std::string body = bytes.substr(kChecksumBlockBytes);
  const std::string block = checksum_block(sha256_hex(body), body.size());
  std::fstream out(path, std::ios::binary | std::ios::in | std::ios::out);
  out.seekp(0);
  out.write(block.data(), static_cast<std::streamsize>(block.size()));
  out.close();
  if (!out) throw InputError(SourceLocation{path, 0, "-o"}, "cannot write the result file's checksum");
}

void verify(const std::string& path) {
  const auto fail = [&](const std::string& what) { throw InputError(SourceLocation{path, 0, ""}, what); };
  const std::string bytes = read_file_bytes(path, "");
  const std::string magic(kChecksumMagic);
  if (bytes.compare(0, magic.size(), magic) != 0) {
    if (bytes.size() >= 8 && bytes.compare(0, 8, std::string(kHdf5Signature, 8)) == 0)
      fail("an HDF5 file without a sigmatube checksum (not written by this version of sigmatube); not read");
    fail("not a sigmatube result file (no sigmatube checksum block; not an HDF5 file written by sigmatube)");
  }
  if (bytes.size() < kChecksumBlockBytes) fail("corrupted result file: truncated inside its checksum block");
  const std::string block = bytes.substr(magic.size(), kChecksumBlockBytes - magic.size());
  std::istringstream fields(block.substr(0, block.find('\0')));
  std::string sha_word, sha, bytes_word;
  unsigned long long length = 0;
  fields >> sha_word >> sha >> bytes_word >> length;
  if (!fields || sha_word != "sha256" || bytes_word != "bytes" || sha.size() != 64 ||
      bytes.compare(0, kChecksumBlockBytes, checksum_block(sha, length)) != 0)
    fail("corrupted result file: its checksum block is damaged");
  const std::size_t body = bytes.size() - kChecksumBlockBytes;
  if (length != body)
    fail("corrupted result file: " + std::to_string(body) + " bytes after the checksum block, the checksum covers " +
         std::to_string(length) + (body < length ? " (truncated)" : ""));
  if (sha256_hex(bytes.substr(kChecksumBlockBytes)) != sha)
    fail("corrupted result file: the SHA-256 checksum does not match its contents (changed since it was written)");
}

// ---------------------------------------------------------------- writing

H5::StrType utf8_string_type() {
  H5::StrType type(H5::PredType::C_S1, H5T_VARIABLE);
  type.setCset(H5T_CSET_UTF8);
  return type;
}

void write_attribute(H5::H5Object& object, const std::string& name, const std::string& value) {
  const H5::StrType type = utf8_string_type();
  H5::Attribute attribute = object.createAttribute(name, type, H5::DataSpace(H5S_SCALAR));
  const char* data = value.c_str();
  attribute.write(type, &data);
}

void write_attribute(H5::H5Object& object, const std::string& name, double value) {
  H5::Attribute attribute = object.createAttribute(name, H5::PredType::NATIVE_DOUBLE, H5::DataSpace(H5S_SCALAR));
  attribute.write(H5::PredType::NATIVE_DOUBLE, &value);
}

void write_attribute(H5::H5Object& object, const std::string& name, long long value) {
  H5::Attribute attribute = object.createAttribute(name, H5::PredType::NATIVE_LLONG, H5::DataSpace(H5S_SCALAR));
  attribute.write(H5::PredType::NATIVE_LLONG, &value);
}

void write_attribute_u64(H5::H5Object& object, const std::string& name, unsigned long long value) {
  H5::Attribute attribute = object.createAttribute(name, H5::PredType::NATIVE_ULLONG, H5::DataSpace(H5S_SCALAR));
  attribute.write(H5::PredType::NATIVE_ULLONG, &value);
}

void write_array(H5::Group& group, const std::string& name, const double* data, const std::vector<hsize_t>& dims) {
  H5::DataSpace space(static_cast<int>(dims.size()), dims.data());
  H5::DataSet dataset = group.createDataSet(name, H5::PredType::NATIVE_DOUBLE, space);
  dataset.write(data, H5::PredType::NATIVE_DOUBLE);
}

void write_scalar(H5::Group& group, const std::string& name, double value) {
  H5::DataSet dataset = group.createDataSet(name, H5::PredType::NATIVE_DOUBLE, H5::DataSpace(H5S_SCALAR));
  dataset.write(&value, H5::PredType::NATIVE_DOUBLE);
}

void write_scalar_int(H5::Group& group, const std::string& name, long long value) {
  H5::DataSet dataset = group.createDataSet(name, H5::PredType::NATIVE_LLONG, H5::DataSpace(H5S_SCALAR));
  dataset.write(&value, H5::PredType::NATIVE_LLONG);
}

void write_vector(H5::Group& group, const std::string& name, const Eigen::VectorXd& v) {
  write_array(group, name, v.data(), {static_cast<hsize_t>(v.size())});
}

void write_vector(H5::Group& group, const std::string& name, const std::vector<double>& v) {
  write_array(group, name, v.data(), {static_cast<hsize_t>(v.size())});
}

void write_flags(H5::Group& group, const std::string& name, const std::vector<std::uint8_t>& v) {
  const hsize_t dims[1] = {v.size()};
  H5::DataSpace space(1, dims);
  H5::DataSet dataset = group.createDataSet(name, H5::PredType::NATIVE_UINT8, space);
  dataset.write(v.data(), H5::PredType::NATIVE_UINT8);
}

void write_matrix(H5::Group& group, const std::string& name, const Eigen::MatrixXd& m) {
  const RowMajorMatrix row_major = m;
  write_array(group, name, row_major.data(), {static_cast<hsize_t>(m.rows()), static_cast<hsize_t>(m.cols())});
}

void write_cube(H5::Group& group, const std::string& name, const Cube& cube, hsize_t rows, hsize_t cols) {
  std::vector<double> buffer;
  buffer.reserve(cube.size() * rows * cols);
  for (const auto& slice : cube) {
    if (static_cast<hsize_t>(slice.rows()) != rows || static_cast<hsize_t>(slice.cols()) != cols)
      throw std::logic_error("write_cube: inconsistent slice shape for " + name);
    const RowMajorMatrix row_major = slice;
    buffer.insert(buffer.end(), row_major.data(), row_major.data() + row_major.size());
  }
  write_array(group, name, buffer.data(), {static_cast<hsize_t>(cube.size()), rows, cols});
}

void write_strings(H5::Group& group, const std::string& name, const std::vector<std::string>& values) {
  const H5::StrType type = utf8_string_type();
  const hsize_t dims[1] = {values.size()};
  H5::DataSpace space(1, dims);
  H5::DataSet dataset = group.createDataSet(name, type, space);
  std::vector<const char*> pointers;
  for (const auto& v : values) pointers.push_back(v.c_str());
  if (!pointers.empty()) dataset.write(pointers.data(), type);
}

void write_surrogate(H5::H5File& file, const AnalysisResult& r) {
  const SurrogateResult& s = r.surrogate;
  const hsize_t n_out = r.output_names.size();
  H5::Group germ = file.createGroup("/germ");
  write_strings(germ, "names", s.germ_names);
  write_strings(germ, "families", s.germ_families);
  write_strings(germ, "karhunen_loeve", s.karhunen_loeve);

  H5::Group g = file.createGroup("/surrogate");
  write_attribute(g, "method", s.method);
  write_attribute(g, "level_reached", static_cast<long long>(s.level_reached));
  write_attribute(g, "degree_reached", static_cast<long long>(s.degree_reached));
  write_attribute(g, "tolerance_met", static_cast<long long>(s.tolerance_met ? 1 : 0));
  write_attribute(g, "samples", s.samples);
  write_attribute(g, "sampling", s.sampling);
  write_attribute(g, "sampling_target_met", static_cast<long long>(s.sampling_target_met ? 1 : 0));
  write_attribute(g, "joint_path_probability", s.joint_path_probability);
  {
    const hsize_t dims[2] = {static_cast<hsize_t>(s.multi_indices.rows()),
                             static_cast<hsize_t>(s.multi_indices.cols())};
    H5::DataSpace space(2, dims);
    H5::DataSet dataset = g.createDataSet("multi_indices", H5::PredType::NATIVE_INT, space);
    if (s.multi_indices.size() > 0) dataset.write(s.multi_indices.data(), H5::PredType::NATIVE_INT);
  }
  const hsize_t P = static_cast<hsize_t>(s.multi_indices.rows());
  const hsize_t d = static_cast<hsize_t>(s.germ_names.size());
  write_cube(g, "coefficients", s.coefficients, n_out, P);
  write_matrix(g, "mean", s.mean);
  write_matrix(g, "std", s.std);
  write_cube(g, "sobol_first", s.sobol_first, n_out, d);
  write_cube(g, "sobol_total", s.sobol_total, n_out, d);
  write_scalar_int(g, "model_runs", s.model_runs);
  write_vector(g, "error_estimate", s.error_estimate);
  write_strings(g, "notes", s.notes);
}

// A string-array attribute ([n], UTF-8).
void write_attribute_strings(H5::H5Object& object, const std::string& name, const std::vector<std::string>& values) {
  const H5::StrType type = utf8_string_type();
  const hsize_t dims[1] = {values.size()};
  H5::Attribute attribute = object.createAttribute(name, type, H5::DataSpace(1, dims));
  std::vector<const char*> pointers;
  for (const auto& v : values) pointers.push_back(v.c_str());
  if (!pointers.empty()) attribute.write(type, pointers.data());
}

void write_attribute_doubles(H5::H5Object& object, const std::string& name, const std::vector<double>& values) {
  const hsize_t dims[1] = {values.size()};
  H5::Attribute attribute = object.createAttribute(name, H5::PredType::NATIVE_DOUBLE, H5::DataSpace(1, dims));
  if (!values.empty()) attribute.write(H5::PredType::NATIVE_DOUBLE, values.data());
}

// Units [n_out] on a dataset whose last axis runs over the outputs.
void write_units(H5::Group& group, const std::string& dataset, const AnalysisResult& r) {
  if (r.output_units.size() != r.output_names.size() || !H5Lexists(group.getId(), dataset.c_str(), H5P_DEFAULT)) return;
  H5::DataSet ds = group.openDataSet(dataset);
  write_attribute_strings(ds, "units", r.output_units);
}

// Quantile tubes, variance shares per input, the deterministic tube and units
// (docs/result-file.md).
void write_breakdown(H5::H5File& file, const AnalysisResult& r) {
  const hsize_t n_out = r.output_names.size();
  {
    H5::Group outputs = file.openGroup("/outputs");
    write_units(outputs, "names", r);
    H5::Group nominal = file.openGroup("/nominal");
    write_units(nominal, "outputs", r);
  }
  const SurrogateResult& s = r.surrogate;
  if (s.done) {
    H5::Group g = file.openGroup("/surrogate");
    write_units(g, "mean", r);
    write_units(g, "std", r);
    if (!s.quantiles.empty()) {
      write_cube(g, "quantiles", s.quantiles, n_out, s.quantile_levels.size());
      H5::DataSet ds = g.openDataSet("quantiles");
      write_attribute_doubles(ds, "levels", s.quantile_levels);
      write_attribute(ds, "samples", s.quantile_samples);
      write_units(g, "quantiles", r);
    }
    if (!s.sobol_first_by_input.empty()) {
      const hsize_t G = s.input_names.size();
      write_strings(g, "input_names", s.input_names);
      write_cube(g, "sobol_first_by_input", s.sobol_first_by_input, n_out, G);
      write_cube(g, "sobol_total_by_input", s.sobol_total_by_input, n_out, G);
      write_cube(g, "sobol_first_by_input_lower", s.sobol_first_by_input_lower, n_out, G);
      write_cube(g, "sobol_first_by_input_upper", s.sobol_first_by_input_upper, n_out, G);
      write_cube(g, "sobol_total_by_input_lower", s.sobol_total_by_input_lower, n_out, G);
      write_cube(g, "sobol_total_by_input_upper", s.sobol_total_by_input_upper, n_out, G);
      write_attribute(g, "sobol_confidence", s.sobol_confidence);
    }
  }
  for (const auto& c : r.constraints) {
    if (c.sobol_first_by_input.size() == 0) continue;
    H5::Group g = file.openGroup("/constraints/" + c.name);
    write_matrix(g, "sobol_first_by_input", c.sobol_first_by_input);
    write_matrix(g, "sobol_total_by_input", c.sobol_total_by_input);
    write_matrix(g, "sobol_first_by_input_lower", c.sobol_first_by_input_lower);
    write_matrix(g, "sobol_first_by_input_upper", c.sobol_first_by_input_upper);
    write_matrix(g, "sobol_total_by_input_lower", c.sobol_total_by_input_lower);
    write_matrix(g, "sobol_total_by_input_upper", c.sobol_total_by_input_upper);
  }
  if (r.montecarlo.done) {
    H5::Group g = file.openGroup("/montecarlo");
    write_units(g, "mean", r);
    write_units(g, "std", r);
  }
  const TubeResult& t = r.tube;
  if (t.done) {
    H5::Group g = file.createGroup("/tube");
    write_vector(g, "radius", t.radius);
    write_vector(g, "rate", t.rate);
    write_matrix(g, "metric", t.metric);
    H5::DataSet radius = g.openDataSet("radius");
    const double finite_rate = t.rate.size() ? t.rate.minCoeff() : kNaN;
    write_attribute(radius, "rate", finite_rate);
    write_attribute(radius, "metric", t.metric_kind);
    write_attribute_strings(radius, "assumptions", t.assumptions);
    write_attribute(radius, "units", t.units);
    write_attribute(g, "sigma", t.sigma);
    write_attribute(g, "bounded", static_cast<long long>(t.bounded ? 1 : 0));
    write_attribute(g, "no_bound_reason", t.no_bound_reason);
    write_strings(g, "position", t.position);
    write_scalar_int(g, "runs_checked", t.runs_checked);
    write_scalar(g, "largest_observed_deviation", t.largest_observed_deviation);
    write_scalar(g, "conservatism", t.conservatism);
    write_scalar_int(g, "exceedances", t.exceedances);
  }
}

void write_constraint(H5::Group& parent, const ConstraintResult& c) {
  H5::Group g = parent.createGroup(c.name);
  write_attribute(g, "type", c.type);
  write_attribute(g, "scope", c.scope);
  write_attribute(g, "verdict", c.verdict);
  write_attribute(g, "reformulation_note", c.reformulation_note);
  write_attribute(g, "agreement", c.agreement);
  write_attribute(g, "agreement_cause", c.agreement_cause);
  write_attribute(g, "within_bound", static_cast<long long>(c.within_bound ? 1 : 0));
  write_scalar(g, "max_probability", c.max_probability);
  write_vector(g, "window", std::vector<double>{c.window[0], c.window[1]});
  write_vector(g, "pointwise_probability", c.pointwise_probability);
  write_vector(g, "pointwise_standard_error", c.pointwise_standard_error);
  write_scalar(g, "path_probability", c.path_probability);
  write_scalar(g, "path_standard_error", c.path_standard_error);
  write_vector(g, "clearance_mean", c.clearance_mean);
  write_vector(g, "clearance_std", c.clearance_std);
  write_vector(g, "clearance_quantile", c.clearance_quantile);
  write_flags(g, "gaussian_ok", c.gaussian_ok);
  write_flags(g, "cantelli_ok", c.cantelli_ok);
  write_scalar(g, "worst_pointwise_probability", c.worst_pointwise_probability);
  write_scalar(g, "worst_time", c.worst_time);
  write_scalar(g, "margin", c.margin);
  write_scalar(g, "required_backoff", c.required_backoff);
  write_scalar(g, "tolerable_radius", c.tolerable_radius);
  write_scalar(g, "radius_inflation", c.radius_inflation);
  // Geometry: written only where the type uses it, so the layout of existing
  // constraint groups is unchanged.
  if (!c.position.empty()) write_strings(g, "position", c.position);
  if (!c.center.empty()) write_vector(g, "center", c.center);
  if (!std::isnan(c.radius)) write_scalar(g, "radius", c.radius);
  if (!c.semi_axes.empty()) write_vector(g, "semi_axes", c.semi_axes);
  if (!c.low.empty()) write_vector(g, "low", c.low);
  if (!c.high.empty()) write_vector(g, "high", c.high);
  const ImportanceSamplingResult& is = c.importance_sampling;
  if (is.done) {
    H5::Group gi = g.createGroup("importance_sampling");
    write_scalar_int(gi, "runs", is.runs);
    write_scalar(gi, "probability", is.probability);
    write_scalar(gi, "standard_error", is.standard_error);
    write_vector(gi, "interval", std::vector<double>{is.interval[0], is.interval[1]});
    write_scalar(gi, "effective_sample_size", is.effective_sample_size);
    write_scalar(gi, "design_point_distance", is.design_point_distance);
    write_vector(gi, "design_point_distances", is.design_point_distances);
    write_scalar(gi, "defensive_share", is.defensive_share);
    write_scalar(gi, "coefficient_of_variation", is.coefficient_of_variation);
    write_scalar(gi, "cov_target", is.cov_target);
    write_attribute(gi, "converged", static_cast<long long>(is.converged ? 1 : 0));
    write_scalar_int(gi, "failed_runs", is.failed_runs);
    write_scalar(gi, "pessimistic_probability", is.pessimistic_probability);
  }
}

void write_montecarlo(H5::H5File& file, const AnalysisResult& r) {
  const MonteCarloResult& m = r.montecarlo;
  H5::Group g = file.createGroup("/montecarlo");
  write_attribute(g, "agreement", m.agreement);
  write_attribute(g, "agreement_cause", m.agreement_cause);
  write_attribute(g, "agreement_details", m.agreement_details);
  write_attribute(g, "false_alarm_level", m.false_alarm_level);
  write_attribute(g, "relative_tolerance", m.relative_tolerance);
  write_attribute(g, "confidence", m.confidence);
  write_attribute_u64(g, "seed", m.seed);
  write_scalar_int(g, "runs", m.runs);
  write_scalar_int(g, "failed_runs", m.failed_runs);
  write_strings(g, "failure_messages", m.failure_messages);
  write_matrix(g, "mean", m.mean);
  write_matrix(g, "std", m.std);
  write_matrix(g, "mean_standard_error", m.mean_standard_error);
  write_matrix(g, "std_standard_error", m.std_standard_error);
  write_vector(g, "validation_rmse", m.validation_rmse);
  write_vector(g, "validation_relative_rmse", m.validation_relative_rmse);
  write_cube(g, "sample_outputs", m.sample_outputs, r.time.size(), r.output_names.size());
  write_scalar(g, "joint_path_probability", m.joint_path_probability);
  write_vector(g, "joint_path_interval", std::vector<double>{m.joint_path_interval[0], m.joint_path_interval[1]});
  H5::Group gc = g.createGroup("constraints");
  for (const auto& c : r.constraints) {
    if (!c.has_montecarlo) continue;
    H5::Group gi = gc.createGroup(c.name);
    write_vector(gi, "pointwise_probability", c.montecarlo.pointwise_probability);
    write_scalar(gi, "path_probability", c.montecarlo.path_probability);
    write_scalar_int(gi, "path_violations", c.montecarlo.path_violations);
    write_vector(gi, "path_interval", std::vector<double>{c.montecarlo.path_interval[0], c.montecarlo.path_interval[1]});
    const MonteCarloConstraint& mc = c.montecarlo;
    write_vector(gi, "path_interval_failures_safe",
                 std::vector<double>{mc.path_interval_failures_safe[0], mc.path_interval_failures_safe[1]});
    write_vector(gi, "path_interval_failures_violating",
                 std::vector<double>{mc.path_interval_failures_violating[0], mc.path_interval_failures_violating[1]});
    write_scalar(gi, "pessimistic_probability", mc.pessimistic_probability);
    write_scalar_int(gi, "compared_runs", mc.compared_runs);
    write_scalar_int(gi, "surrogate_only", mc.surrogate_only);
    write_scalar_int(gi, "model_only", mc.model_only);
    write_scalar_int(gi, "compared_time_index", mc.compared_time_index);
    write_scalar(gi, "paired_difference", mc.paired_difference);
    write_vector(gi, "paired_interval", std::vector<double>{mc.paired_interval[0], mc.paired_interval[1]});
    write_scalar(gi, "mcnemar_p", mc.mcnemar_p);
    write_scalar(gi, "holm_p", mc.holm_p);
  }
}

void write_all(const AnalysisResult& r, const std::string& path) {
  H5::Exception::dontPrint();
  H5::FileCreatPropList creation;
  creation.setUserblock(kChecksumBlockBytes);  // the checksum block, filled by seal() once the file is closed
  H5::H5File file(path, H5F_ACC_TRUNC, creation);
  write_attribute(file, "tool_version", r.tool_version);
  write_attribute(file, "case_sha256", r.case_sha256);
  write_attribute(file, "inputs_sha256", r.inputs_sha256);
  write_attribute(file, "created_utc", r.created_utc);
  write_attribute_u64(file, "seed", r.seed);
  write_attribute(file, "title", r.title);
  write_attribute(file, "case_path", r.case_path);
  write_attribute(file, "command", r.command);
  H5::Group root = file.openGroup("/");
  write_vector(root, "time", r.time);
  H5::Group outputs = file.createGroup("/outputs");
  write_strings(outputs, "names", r.output_names);
  H5::Group nominal = file.createGroup("/nominal");
  write_matrix(nominal, "outputs", r.nominal_outputs);
  if (r.surrogate.done) write_surrogate(file, r);
  if (!r.constraints.empty()) {
    H5::Group g = file.createGroup("/constraints");
    // Groups list by name; the case file's order is kept in this attribute.
    std::string order;
    for (const auto& c : r.constraints) order += (order.empty() ? "" : "\n") + c.name;
    write_attribute(g, "order", order);
    for (const auto& c : r.constraints) write_constraint(g, c);
  }
  if (r.montecarlo.done) write_montecarlo(file, r);
  write_breakdown(file, r);
  file.close();
}

// ---------------------------------------------------------------- reading

// Sizes no sigmatube result reaches; larger ones mean a damaged file.
constexpr hsize_t kMaxElements = hsize_t{1} << 31;
constexpr hsize_t kMaxStrings = hsize_t{1} << 20;
constexpr std::size_t kMaxStringBytes = std::size_t{1} << 24;

struct Reader {
  std::string path;

  [[noreturn]] void fail(const std::string& what) const {
    throw InputError(SourceLocation{path, 0, ""}, what);
  }

  static bool exists(const H5::Group& g, const std::string& name) {
    return H5Lexists(g.getId(), name.c_str(), H5P_DEFAULT) > 0;
  }

  H5::DataSet open(const H5::Group& g, const std::string& name) const {
    if (!exists(g, name)) fail("not a sigmatube result: missing dataset '" + name + "'");
    return g.openDataSet(name);
  }

  std::vector<hsize_t> dims(const H5::DataSet& ds) const {
    H5::DataSpace space = ds.getSpace();
    const int rank = space.getSimpleExtentNdims();
    std::vector<hsize_t> d(static_cast<std::size_t>(std::max(rank, 0)));
    if (rank > 0) space.getSimpleExtentDims(d.data());
    return d;
  }

  // Element count of a dataset, refusing sizes no result file can have (the
  // checksum makes this unreachable for files written by sigmatube).
  hsize_t elements(const std::vector<hsize_t>& d, const std::string& name) const {
    hsize_t n = 1;
    for (hsize_t x : d) {
      if (x != 0 && n > kMaxElements / x) fail("dataset '" + name + "' has an impossible size");
      n *= x;
    }
    return n;
  }

  void require_class(const H5::DataSet& ds, H5T_class_t wanted, const std::string& name) const {
    const H5T_class_t found = ds.getTypeClass();
    const bool numeric = wanted == H5T_FLOAT || wanted == H5T_INTEGER;
    if (found == wanted || (numeric && (found == H5T_FLOAT || found == H5T_INTEGER))) return;
    fail("dataset '" + name + "' has the wrong type");
  }

  std::vector<double> doubles(const H5::Group& g, const std::string& name, std::vector<hsize_t>* shape = nullptr) const {
    H5::DataSet ds = open(g, name);
    require_class(ds, H5T_FLOAT, name);
    const auto d = dims(ds);
    const hsize_t n = elements(d, name);
    std::vector<double> v(n);
    if (n > 0) ds.read(v.data(), H5::PredType::NATIVE_DOUBLE);
    if (shape) *shape = d;
    return v;
  }

  double scalar(const H5::Group& g, const std::string& name) const {
    const auto v = doubles(g, name);
    if (v.size() != 1) fail("dataset '" + name + "' is not a scalar");
    return v[0];
  }

  long long scalar_int(const H5::Group& g, const std::string& name) const {
    H5::DataSet ds = open(g, name);
    require_class(ds, H5T_INTEGER, name);
    if (elements(dims(ds), name) != 1) fail("dataset '" + name + "' is not a scalar");
    long long value = 0;
    ds.read(&value, H5::PredType::NATIVE_LLONG);
    return value;
  }

  Eigen::VectorXd vector(const H5::Group& g, const std::string& name) const {
    const auto v = doubles(g, name);
    return Eigen::Map<const Eigen::VectorXd>(v.data(), static_cast<Eigen::Index>(v.size()));
  }

  Eigen::MatrixXd matrix(const H5::Group& g, const std::string& name) const {
    std::vector<hsize_t> shape;
    const auto v = doubles(g, name, &shape);
    if (shape.size() != 2) fail("dataset '" + name + "' is not two-dimensional");
    return Eigen::Map<const RowMajorMatrix>(v.data(), static_cast<Eigen::Index>(shape[0]),
                                            static_cast<Eigen::Index>(shape[1]));
  }

  Cube cube(const H5::Group& g, const std::string& name) const {
    std::vector<hsize_t> shape;
    const auto v = doubles(g, name, &shape);
    if (shape.size() != 3) fail("dataset '" + name + "' is not three-dimensional");
    Cube c;
    const std::size_t slice = shape[1] * shape[2];
    for (hsize_t k = 0; k < shape[0]; ++k)
      c.push_back(Eigen::Map<const RowMajorMatrix>(v.data() + k * slice, static_cast<Eigen::Index>(shape[1]),
                                                   static_cast<Eigen::Index>(shape[2])));
    return c;
  }

  std::vector<std::uint8_t> flags(const H5::Group& g, const std::string& name) const {
    H5::DataSet ds = open(g, name);
    require_class(ds, H5T_INTEGER, name);
    const auto d = dims(ds);
    std::vector<std::uint8_t> v(d.empty() ? 1 : elements(d, name));
    if (!v.empty()) ds.read(v.data(), H5::PredType::NATIVE_UINT8);
    return v;
  }

  // Variable-length strings: the memory type takes its character set from the
  // file's; the type must be a variable-length string (a fixed-length or other
  // type is refused instead of trusting a length from the file), and each
  // string is copied up to kMaxStringBytes.
  std::vector<std::string> strings(const H5::Group& g, const std::string& name) const {
    H5::DataSet ds = open(g, name);
    require_class(ds, H5T_STRING, name);
    const auto d = dims(ds);
    std::vector<std::string> out;
    if (d.size() != 1) fail("dataset '" + name + "' is not a list of strings");
    if (d[0] == 0) return out;
    if (d[0] > kMaxStrings) fail("dataset '" + name + "' has an impossible size");
    H5::StrType file_type = ds.getStrType();
    if (!file_type.isVariableStr()) fail("dataset '" + name + "' is not a variable-length string");
    H5::StrType memory_type(H5::PredType::C_S1, H5T_VARIABLE);
    memory_type.setCset(file_type.getCset());
    std::vector<char*> pointers(d[0], nullptr);
    ds.read(pointers.data(), memory_type);
    for (char* p : pointers) out.emplace_back(p ? std::string(p, ::strnlen(p, kMaxStringBytes)) : std::string());
    H5::DataSpace space = ds.getSpace();
    H5Dvlen_reclaim(memory_type.getId(), space.getId(), H5P_DEFAULT, pointers.data());
    return out;
  }

  static bool has_attribute(const H5::H5Object& o, const std::string& name) { return o.attrExists(name); }

  std::string attribute_string(const H5::H5Object& o, const std::string& name) const {
    if (!has_attribute(o, name)) return {};
    H5::Attribute a = o.openAttribute(name);
    if (a.getTypeClass() != H5T_STRING) fail("attribute '" + name + "' is not a string");
    if (a.getSpace().getSimpleExtentNpoints() != 1) fail("attribute '" + name + "' is not a single string");
    H5::StrType file_type = a.getStrType();
    if (!file_type.isVariableStr()) fail("attribute '" + name + "' is not a variable-length string");
    H5::StrType memory_type(H5::PredType::C_S1, H5T_VARIABLE);
    memory_type.setCset(file_type.getCset());
    char* p = nullptr;
    a.read(memory_type, &p);
    std::string value = p ? std::string(p, ::strnlen(p, kMaxStringBytes)) : std::string();
    H5free_memory(p);
    return value;
  }

  H5::Attribute numeric_attribute(const H5::H5Object& o, const std::string& name) const {
    H5::Attribute a = o.openAttribute(name);
    const H5T_class_t c = a.getTypeClass();
    if (c != H5T_FLOAT && c != H5T_INTEGER) fail("attribute '" + name + "' is not a number");
    if (a.getSpace().getSimpleExtentNpoints() != 1) fail("attribute '" + name + "' is not a single number");
    return a;
  }

  double attribute_double(const H5::H5Object& o, const std::string& name, double fallback) const {
    if (!has_attribute(o, name)) return fallback;
    double v = fallback;
    numeric_attribute(o, name).read(H5::PredType::NATIVE_DOUBLE, &v);
    return v;
  }

  long long attribute_int(const H5::H5Object& o, const std::string& name, long long fallback) const {
    if (!has_attribute(o, name)) return fallback;
    long long v = fallback;
    numeric_attribute(o, name).read(H5::PredType::NATIVE_LLONG, &v);
    return v;
  }

  unsigned long long attribute_u64(const H5::H5Object& o, const std::string& name) const {
    if (!has_attribute(o, name)) return 0;
    unsigned long long v = 0;
    numeric_attribute(o, name).read(H5::PredType::NATIVE_ULLONG, &v);
    return v;
  }

  std::vector<std::string> attribute_strings(const H5::H5Object& o, const std::string& name) const {
    std::vector<std::string> out;
    if (!has_attribute(o, name)) return out;
    H5::Attribute a = o.openAttribute(name);
    H5::DataSpace space = a.getSpace();
    if (space.getSimpleExtentNdims() != 1) fail("attribute '" + name + "' is not a list of strings");
    hsize_t n = 0;
    space.getSimpleExtentDims(&n);
    if (n == 0) return out;
    H5::StrType file_type = a.getStrType();
    if (!file_type.isVariableStr()) fail("attribute '" + name + "' is not a list of variable-length strings");
    H5::StrType memory_type(H5::PredType::C_S1, H5T_VARIABLE);
    memory_type.setCset(file_type.getCset());
    std::vector<char*> pointers(n, nullptr);
    a.read(memory_type, pointers.data());
    for (char* p : pointers) out.emplace_back(p ? p : "");
    H5Dvlen_reclaim(memory_type.getId(), space.getId(), H5P_DEFAULT, pointers.data());
    return out;
  }

  std::vector<double> attribute_doubles(const H5::H5Object& o, const std::string& name) const {
    std::vector<double> out;
    if (!has_attribute(o, name)) return out;
    H5::Attribute a = o.openAttribute(name);
    H5::DataSpace space = a.getSpace();
    const hssize_t n = space.getSimpleExtentNpoints();
    if (n < 0) fail("attribute '" + name + "' has no size");
    out.resize(static_cast<std::size_t>(n));
    if (n > 0) a.read(H5::PredType::NATIVE_DOUBLE, out.data());
    return out;
  }

  std::vector<std::string> children(const H5::Group& g) const {
    std::vector<std::string> names;
    for (hsize_t i = 0; i < g.getNumObjs(); ++i) names.push_back(g.getObjnameByIdx(i));
    return names;
  }
};

void read_pair(const Reader& reader, const H5::Group& g, const std::string& name, double out[2]) {
  const auto v = reader.doubles(g, name);
  if (v.size() != 2) reader.fail("dataset '" + name + "' must hold two values");
  out[0] = v[0];
  out[1] = v[1];
}


// The optional parts write_breakdown adds; absent in files of older versions.
void read_breakdown(const Reader& reader, H5::H5File& file, AnalysisResult& r) {
  H5::Group root = file.openGroup("/");
  {
    H5::DataSet names = file.openGroup("/outputs").openDataSet("names");
    r.output_units = reader.attribute_strings(names, "units");
    if (r.output_units.size() != r.output_names.size()) r.output_units.assign(r.output_names.size(), "");
  }
  if (r.surrogate.done) {
    SurrogateResult& s = r.surrogate;
    H5::Group g = file.openGroup("/surrogate");
    if (Reader::exists(g, "quantiles")) {
      s.quantiles = reader.cube(g, "quantiles");
      H5::DataSet ds = g.openDataSet("quantiles");
      s.quantile_levels = reader.attribute_doubles(ds, "levels");
      s.quantile_samples = reader.attribute_int(ds, "samples", 0);
    }
    if (Reader::exists(g, "sobol_first_by_input")) {
      s.input_names = reader.strings(g, "input_names");
      s.sobol_first_by_input = reader.cube(g, "sobol_first_by_input");
      s.sobol_total_by_input = reader.cube(g, "sobol_total_by_input");
      s.sobol_first_by_input_lower = reader.cube(g, "sobol_first_by_input_lower");
      s.sobol_first_by_input_upper = reader.cube(g, "sobol_first_by_input_upper");
      s.sobol_total_by_input_lower = reader.cube(g, "sobol_total_by_input_lower");
      s.sobol_total_by_input_upper = reader.cube(g, "sobol_total_by_input_upper");
      s.sobol_confidence = reader.attribute_double(g, "sobol_confidence", kNaN);
    }
  }
  for (auto& c : r.constraints) {
    H5::Group g = file.openGroup("/constraints/" + c.name);
    if (!Reader::exists(g, "sobol_first_by_input")) continue;
    c.sobol_first_by_input = reader.matrix(g, "sobol_first_by_input");
    c.sobol_total_by_input = reader.matrix(g, "sobol_total_by_input");
    c.sobol_first_by_input_lower = reader.matrix(g, "sobol_first_by_input_lower");
    c.sobol_first_by_input_upper = reader.matrix(g, "sobol_first_by_input_upper");
    c.sobol_total_by_input_lower = reader.matrix(g, "sobol_total_by_input_lower");
    c.sobol_total_by_input_upper = reader.matrix(g, "sobol_total_by_input_upper");
  }
  if (Reader::exists(root, "tube")) {
    TubeResult& t = r.tube;
    t.done = true;
    H5::Group g = file.openGroup("/tube");
    t.radius = reader.vector(g, "radius");
    t.rate = reader.vector(g, "rate");
    t.metric = reader.matrix(g, "metric");
    H5::DataSet radius = g.openDataSet("radius");
    t.metric_kind = reader.attribute_string(radius, "metric");
    t.assumptions = reader.attribute_strings(radius, "assumptions");
    t.units = reader.attribute_string(radius, "units");
    t.sigma = reader.attribute_double(g, "sigma", kNaN);
    t.bounded = reader.attribute_int(g, "bounded", 1) != 0;
    t.no_bound_reason = reader.attribute_string(g, "no_bound_reason");
    t.position = reader.strings(g, "position");
    t.runs_checked = reader.scalar_int(g, "runs_checked");
    t.largest_observed_deviation = reader.scalar(g, "largest_observed_deviation");
    t.conservatism = reader.scalar(g, "conservatism");
    t.exceedances = reader.scalar_int(g, "exceedances");
  }
}

AnalysisResult read_all(const std::string& path) {
  H5::Exception::dontPrint();
  Reader reader{path};
  H5::H5File file(path, H5F_ACC_RDONLY);
  H5::Group root = file.openGroup("/");
  AnalysisResult r;
  if (!root.attrExists("tool_version")) reader.fail("not a sigmatube result: no tool_version attribute");
  r.tool_version = reader.attribute_string(root, "tool_version");
  r.case_sha256 = reader.attribute_string(root, "case_sha256");
  r.inputs_sha256 = reader.attribute_string(root, "inputs_sha256");
  r.created_utc = reader.attribute_string(root, "created_utc");
  r.seed = reader.attribute_u64(root, "seed");
  r.title = reader.attribute_string(root, "title");
  r.case_path = reader.attribute_string(root, "case_path");
  r.command = reader.attribute_string(root, "command");
  r.time = reader.doubles(root, "time");
  r.output_names = reader.strings(file.openGroup("/outputs"), "names");
  r.nominal_outputs = reader.matrix(file.openGroup("/nominal"), "outputs");

  if (Reader::exists(root, "surrogate")) {
    SurrogateResult& s = r.surrogate;
    s.done = true;
    H5::Group germ = file.openGroup("/germ");
    s.germ_names = reader.strings(germ, "names");
    s.germ_families = reader.strings(germ, "families");
    s.karhunen_loeve = reader.strings(germ, "karhunen_loeve");
    H5::Group g = file.openGroup("/surrogate");
    s.method = reader.attribute_string(g, "method");
    s.level_reached = static_cast<int>(reader.attribute_int(g, "level_reached", 0));
    s.degree_reached = static_cast<int>(reader.attribute_int(g, "degree_reached", 0));
    s.tolerance_met = reader.attribute_int(g, "tolerance_met", 1) != 0;
    s.samples = reader.attribute_int(g, "samples", 0);
    s.sampling = g.attrExists("sampling") ? reader.attribute_string(g, "sampling") : "fixed";
    s.sampling_target_met = reader.attribute_int(g, "sampling_target_met", 1) != 0;
    s.joint_path_probability = reader.attribute_double(g, "joint_path_probability", kNaN);
    {
      H5::DataSet ds = reader.open(g, "multi_indices");
      const auto d = reader.dims(ds);
      if (d.size() != 2) reader.fail("dataset 'multi_indices' is not two-dimensional");
      reader.require_class(ds, H5T_INTEGER, "multi_indices");
      (void)reader.elements(d, "multi_indices");
      s.multi_indices.resize(static_cast<Eigen::Index>(d[0]), static_cast<Eigen::Index>(d[1]));
      if (s.multi_indices.size() > 0) ds.read(s.multi_indices.data(), H5::PredType::NATIVE_INT);
    }
    s.coefficients = reader.cube(g, "coefficients");
    s.mean = reader.matrix(g, "mean");
    s.std = reader.matrix(g, "std");
    s.sobol_first = reader.cube(g, "sobol_first");
    s.sobol_total = reader.cube(g, "sobol_total");
    s.model_runs = reader.scalar_int(g, "model_runs");
    s.error_estimate = reader.vector(g, "error_estimate");
    s.notes = reader.strings(g, "notes");
  }

  if (Reader::exists(root, "constraints")) {
    H5::Group parent = file.openGroup("/constraints");
    std::vector<std::string> names;
    {
      std::istringstream order(reader.attribute_string(parent, "order"));
      for (std::string line; std::getline(order, line);)
        if (Reader::exists(parent, line)) names.push_back(line);
      if (names.empty()) names = reader.children(parent);
    }
    for (const auto& name : names) {
      H5::Group g = parent.openGroup(name);
      ConstraintResult c;
      c.name = name;
      c.type = reader.attribute_string(g, "type");
      c.scope = reader.attribute_string(g, "scope");
      c.verdict = reader.attribute_string(g, "verdict");
      c.reformulation_note = reader.attribute_string(g, "reformulation_note");
      c.agreement = reader.attribute_string(g, "agreement");
      c.agreement_cause = reader.attribute_string(g, "agreement_cause");
      c.within_bound = reader.attribute_int(g, "within_bound", 1) != 0;
      c.max_probability = reader.scalar(g, "max_probability");
      read_pair(reader, g, "window", c.window);
      c.pointwise_probability = reader.vector(g, "pointwise_probability");
      c.pointwise_standard_error = reader.vector(g, "pointwise_standard_error");
      c.path_probability = reader.scalar(g, "path_probability");
      c.path_standard_error = reader.scalar(g, "path_standard_error");
      c.clearance_mean = reader.vector(g, "clearance_mean");
      c.clearance_std = reader.vector(g, "clearance_std");
      c.clearance_quantile = reader.vector(g, "clearance_quantile");
      c.gaussian_ok = reader.flags(g, "gaussian_ok");
      c.cantelli_ok = reader.flags(g, "cantelli_ok");
      c.worst_pointwise_probability = reader.scalar(g, "worst_pointwise_probability");
      c.worst_time = reader.scalar(g, "worst_time");
      c.margin = reader.scalar(g, "margin");
      c.required_backoff = reader.scalar(g, "required_backoff");
      c.tolerable_radius = reader.scalar(g, "tolerable_radius");
      c.radius_inflation = reader.scalar(g, "radius_inflation");
      if (Reader::exists(g, "position")) c.position = reader.strings(g, "position");
      if (Reader::exists(g, "center")) c.center = reader.doubles(g, "center");
      if (Reader::exists(g, "radius")) c.radius = reader.scalar(g, "radius");
      if (Reader::exists(g, "semi_axes")) c.semi_axes = reader.doubles(g, "semi_axes");
      if (Reader::exists(g, "low")) c.low = reader.doubles(g, "low");
      if (Reader::exists(g, "high")) c.high = reader.doubles(g, "high");
      if (Reader::exists(g, "importance_sampling")) {
        H5::Group gi = g.openGroup("importance_sampling");
        auto& is = c.importance_sampling;
        is.done = true;
        is.runs = reader.scalar_int(gi, "runs");
        is.probability = reader.scalar(gi, "probability");
        is.standard_error = reader.scalar(gi, "standard_error");
        read_pair(reader, gi, "interval", is.interval);
        is.effective_sample_size = reader.scalar(gi, "effective_sample_size");
        is.design_point_distance = reader.scalar(gi, "design_point_distance");
        if (Reader::exists(gi, "design_point_distances")) {
          is.design_point_distances = reader.doubles(gi, "design_point_distances");
          is.defensive_share = reader.scalar(gi, "defensive_share");
        }
        if (Reader::exists(gi, "coefficient_of_variation")) {
          is.coefficient_of_variation = reader.scalar(gi, "coefficient_of_variation");
          is.cov_target = reader.scalar(gi, "cov_target");
          is.converged = reader.attribute_int(gi, "converged", 0) != 0;
          is.failed_runs = reader.scalar_int(gi, "failed_runs");
          is.pessimistic_probability = reader.scalar(gi, "pessimistic_probability");
        }
      }
      r.constraints.push_back(std::move(c));
    }
  }

  if (Reader::exists(root, "montecarlo")) {
    MonteCarloResult& m = r.montecarlo;
    m.done = true;
    H5::Group g = file.openGroup("/montecarlo");
    m.agreement = reader.attribute_string(g, "agreement");
    m.agreement_cause = reader.attribute_string(g, "agreement_cause");
    m.agreement_details = reader.attribute_string(g, "agreement_details");
    m.false_alarm_level = reader.attribute_double(g, "false_alarm_level", kNaN);
    m.relative_tolerance = reader.attribute_double(g, "relative_tolerance", kNaN);
    m.confidence = reader.attribute_double(g, "confidence", 0.95);
    m.seed = reader.attribute_u64(g, "seed");
    m.runs = reader.scalar_int(g, "runs");
    m.failed_runs = reader.scalar_int(g, "failed_runs");
    m.failure_messages = reader.strings(g, "failure_messages");
    m.mean = reader.matrix(g, "mean");
    m.std = reader.matrix(g, "std");
    m.mean_standard_error = reader.matrix(g, "mean_standard_error");
    m.std_standard_error = reader.matrix(g, "std_standard_error");
    m.validation_rmse = reader.vector(g, "validation_rmse");
    m.validation_relative_rmse = reader.vector(g, "validation_relative_rmse");
    m.sample_outputs = reader.cube(g, "sample_outputs");
    m.joint_path_probability = reader.scalar(g, "joint_path_probability");
    read_pair(reader, g, "joint_path_interval", m.joint_path_interval);
    H5::Group gc = g.openGroup("constraints");
    for (auto& c : r.constraints) {
      if (!Reader::exists(gc, c.name)) continue;
      H5::Group gi = gc.openGroup(c.name);
      c.has_montecarlo = true;
      c.montecarlo.pointwise_probability = reader.vector(gi, "pointwise_probability");
      c.montecarlo.path_probability = reader.scalar(gi, "path_probability");
      c.montecarlo.path_violations = reader.scalar_int(gi, "path_violations");
      read_pair(reader, gi, "path_interval", c.montecarlo.path_interval);
      if (Reader::exists(gi, "compared_runs")) {
        auto& mc = c.montecarlo;
        read_pair(reader, gi, "path_interval_failures_safe", mc.path_interval_failures_safe);
        read_pair(reader, gi, "path_interval_failures_violating", mc.path_interval_failures_violating);
        mc.pessimistic_probability = reader.scalar(gi, "pessimistic_probability");
        mc.compared_runs = reader.scalar_int(gi, "compared_runs");
        mc.surrogate_only = reader.scalar_int(gi, "surrogate_only");
        mc.model_only = reader.scalar_int(gi, "model_only");
        mc.compared_time_index = static_cast<int>(reader.scalar_int(gi, "compared_time_index"));
        mc.paired_difference = reader.scalar(gi, "paired_difference");
        read_pair(reader, gi, "paired_interval", mc.paired_interval);
        mc.mcnemar_p = reader.scalar(gi, "mcnemar_p");
        mc.holm_p = reader.scalar(gi, "holm_p");
      }
    }
  }
  read_breakdown(reader, file, r);
  return r;
}

}  // namespace

int AnalysisResult::verdict_exit_code() const {
  bool exceeded = false;
  for (const auto& c : constraints) exceeded = exceeded || !c.within_bound;
  if (montecarlo.done && montecarlo.agreement == "disagree") return 3;
  return exceeded ? 1 : 0;
}

void check_output_path(const std::string& path, bool force, const std::string& option) {
  OutputSet outputs(force);
  outputs.output(path, option);
  outputs.check();
}

void write_result_to(const AnalysisResult& result, const std::string& file) {
  try {
    write_all(result, file);
    seal(file);
  } catch (const H5::Exception& e) {
    throw InputError(SourceLocation{file, 0, "-o"}, "cannot write result file: " + e.getDetailMsg());
  }
}

void write_result_file(const AnalysisResult& result, const std::string& path, bool force) {
  OutputSet outputs(force);
  outputs.output(path, "-o");
  outputs.stage(path, [&](const std::string& temporary) { write_result_to(result, temporary); });
  outputs.commit();
}

AnalysisResult read_result_file(const std::string& path) {
  refuse_temporary_as_input(path, "");
  const std::string problem = input_file_problem(path);
  if (!problem.empty()) throw InputError(SourceLocation{path, 0, ""}, problem);
  H5::Exception::dontPrint();
  if (H5Fis_hdf5(path.c_str()) <= 0)
    throw InputError(SourceLocation{path, 0, ""},
                     "not a sigmatube result file (not HDF5; results are written by `run` and `simulate`)");
  verify(path);
  try {
    return read_all(path);
  } catch (const H5::Exception& e) {
    std::string detail = e.getDetailMsg();
    if (detail.size() > 200) detail = detail.substr(0, 200) + "...";
    throw InputError(SourceLocation{path, 0, ""}, "cannot read result file: " + detail);
  } catch (const std::bad_alloc&) {
    throw InputError(SourceLocation{path, 0, ""}, "cannot read result file: a dataset is larger than memory allows");
  } catch (const std::length_error&) {
    throw InputError(SourceLocation{path, 0, ""}, "cannot read result file: a dataset has an impossible size");
  }
}

void write_text_file(const std::string& text, const std::string& path, bool force) {
  OutputSet outputs(force);
  outputs.output(path, "-o");
  outputs.stage_text(path, text);
  outputs.commit();
}

}  // namespace sigmatube::result

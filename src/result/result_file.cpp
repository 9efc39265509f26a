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

namespace sigmatube::result {
namespace {

namespace fs = std::filesystem;
using RowMajorMatrix = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;
using IndexMatrix = Eigen::Matrix<int, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;

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
  }
}

void write_montecarlo(H5::H5File& file, const AnalysisResult& r) {
  const MonteCarloResult& m = r.montecarlo;
  H5::Group g = file.createGroup("/montecarlo");
  write_attribute(g, "agreement", m.agreement);
  write_attribute(g, "agreement_cause", m.agreement_cause);
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
  }
}

void write_all(const AnalysisResult& r, const std::string& path) {
  H5::Exception::dontPrint();
  H5::H5File file(path, H5F_ACC_TRUNC);
  write_attribute(file, "tool_version", r.tool_version);
  write_attribute(file, "case_sha256", r.case_sha256);
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
  file.close();
}

// ---------------------------------------------------------------- reading

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

  std::vector<double> doubles(const H5::Group& g, const std::string& name, std::vector<hsize_t>* shape = nullptr) const {
    H5::DataSet ds = open(g, name);
    const auto d = dims(ds);
    hsize_t n = 1;
    for (hsize_t x : d) n *= x;
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
    const auto d = dims(ds);
    std::vector<std::uint8_t> v(d.empty() ? 1 : d[0]);
    if (!v.empty()) ds.read(v.data(), H5::PredType::NATIVE_UINT8);
    return v;
  }

  std::vector<std::string> strings(const H5::Group& g, const std::string& name) const {
    H5::DataSet ds = open(g, name);
    const auto d = dims(ds);
    std::vector<std::string> out;
    if (d.empty() || d[0] == 0) return out;
    H5::StrType file_type = ds.getStrType();
    H5::StrType memory_type(H5::PredType::C_S1, H5T_VARIABLE);
    memory_type.setCset(file_type.getCset());
    std::vector<char*> pointers(d[0], nullptr);
    ds.read(pointers.data(), memory_type);
    for (char* p : pointers) out.emplace_back(p ? p : "");
    H5::DataSpace space = ds.getSpace();
    H5Dvlen_reclaim(memory_type.getId(), space.getId(), H5P_DEFAULT, pointers.data());
    return out;
  }

  static bool has_attribute(const H5::H5Object& o, const std::string& name) { return o.attrExists(name); }

  std::string attribute_string(const H5::H5Object& o, const std::string& name) const {
    if (!has_attribute(o, name)) return {};
    H5::Attribute a = o.openAttribute(name);
    H5::StrType file_type = a.getStrType();
    H5::StrType memory_type(H5::PredType::C_S1, H5T_VARIABLE);
    memory_type.setCset(file_type.getCset());
    char* p = nullptr;
    a.read(memory_type, &p);
    std::string value = p ? p : "";
    H5free_memory(p);
    return value;
  }

  double attribute_double(const H5::H5Object& o, const std::string& name, double fallback) const {
    if (!has_attribute(o, name)) return fallback;
    double v = fallback;
    o.openAttribute(name).read(H5::PredType::NATIVE_DOUBLE, &v);
    return v;
  }

  long long attribute_int(const H5::H5Object& o, const std::string& name, long long fallback) const {
    if (!has_attribute(o, name)) return fallback;
    long long v = fallback;
    o.openAttribute(name).read(H5::PredType::NATIVE_LLONG, &v);
    return v;
  }

  unsigned long long attribute_u64(const H5::H5Object& o, const std::string& name) const {
    if (!has_attribute(o, name)) return 0;
    unsigned long long v = 0;
    o.openAttribute(name).read(H5::PredType::NATIVE_ULLONG, &v);
    return v;
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

AnalysisResult read_all(const std::string& path) {
  H5::Exception::dontPrint();
  Reader reader{path};
  H5::H5File file(path, H5F_ACC_RDONLY);
  H5::Group root = file.openGroup("/");
  AnalysisResult r;
  if (!root.attrExists("tool_version")) reader.fail("not a sigmatube result: no tool_version attribute");
  r.tool_version = reader.attribute_string(root, "tool_version");
  r.case_sha256 = reader.attribute_string(root, "case_sha256");
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
    }
  }
  return r;
}

std::string temporary_name(const std::string& path) {
  std::ostringstream name;
  name << path << ".tmp." << ::getpid();
  return name.str();
}

// Moves a finished temporary file to its final name.
void publish(const std::string& temporary, const std::string& path, bool force) {
  if (force) {
    if (std::rename(temporary.c_str(), path.c_str()) != 0) {
      const int e = errno;
      std::remove(temporary.c_str());
      throw InputError(SourceLocation{path, 0, "-o"}, std::string("cannot write: ") + std::strerror(e));
    }
    return;
  }
  // link() fails with EEXIST if the name was taken: never replaces a file.
  if (::link(temporary.c_str(), path.c_str()) != 0) {
    const int e = errno;
    std::remove(temporary.c_str());
    if (e == EEXIST)
      throw InputError(SourceLocation{path, 0, "-o"}, "file exists (use --force to overwrite)");
    throw InputError(SourceLocation{path, 0, "-o"}, std::string("cannot write: ") + std::strerror(e));
  }
  std::remove(temporary.c_str());
}

}  // namespace

int AnalysisResult::verdict_exit_code() const {
  bool exceeded = false;
  for (const auto& c : constraints) exceeded = exceeded || !c.within_bound;
  if (montecarlo.done && montecarlo.agreement == "disagree") return 3;
  return exceeded ? 1 : 0;
}

void check_output_path(const std::string& path, bool force) {
  if (path.empty()) throw InputError(SourceLocation{"", 0, "-o"}, "an output file name is required");
  const fs::path p(path);
  const fs::path folder = p.has_parent_path() ? p.parent_path() : fs::path(".");
  if (!fs::is_directory(folder))
    throw InputError(SourceLocation{path, 0, "-o"}, "folder '" + folder.string() + "' does not exist");
  if (fs::exists(p) && !force)
    throw InputError(SourceLocation{path, 0, "-o"}, "file exists (use --force to overwrite)");
  if (fs::is_directory(p)) throw InputError(SourceLocation{path, 0, "-o"}, "is a folder");
}

void write_result_file(const AnalysisResult& result, const std::string& path, bool force) {
  check_output_path(path, force);
  const std::string temporary = temporary_name(path);
  try {
    write_all(result, temporary);
  } catch (const H5::Exception& e) {
    std::remove(temporary.c_str());
    throw InputError(SourceLocation{path, 0, "-o"}, "cannot write result file: " + e.getDetailMsg());
  } catch (...) {
    std::remove(temporary.c_str());
    throw;
  }
  publish(temporary, path, force);
}

AnalysisResult read_result_file(const std::string& path) {
  if (!fs::exists(path)) throw InputError(SourceLocation{path, 0, ""}, "no such file");
  try {
    return read_all(path);
  } catch (const H5::Exception& e) {
    throw InputError(SourceLocation{path, 0, ""}, "cannot read result file: " + e.getDetailMsg());
  }
}

void write_text_file(const std::string& text, const std::string& path, bool force) {
  check_output_path(path, force);
  const std::string temporary = temporary_name(path);
  {
    std::ofstream out(temporary, std::ios::binary);
    out << text;
    out.close();
    if (!out) {
      std::remove(temporary.c_str());
      throw InputError(SourceLocation{path, 0, ""}, "cannot write file");
    }
  }
  publish(temporary, path, force);
}

}  // namespace sigmatube::result

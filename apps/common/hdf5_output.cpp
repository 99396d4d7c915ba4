#include "common/hdf5_output.hpp"

#include <algorithm>
#include <cmath>

#include "io/errors.hpp"
#include "io/output_file.hpp"

#ifdef ORDEX_HAVE_HDF5
#include <hdf5.h>
#endif

namespace ordex {

void add_hdf5_option(boost::program_options::options_description& desc, std::string& path, const std::string& what) {
  desc.add_options()("hdf5", boost::program_options::value(&path)->value_name("PATH"),
                     ("write an HDF5 file of " + what + ", each sample as it is computed, with the summary's "
                      "header as attributes (docs/plots.md)" + (hdf5_available() ? "" : "; not in this build")).c_str());
}

#ifndef ORDEX_HAVE_HDF5

bool hdf5_available() { return false; }

struct Hdf5Output::Impl {};

Hdf5Output::Hdf5Output(const std::string& path) {
  if (!path.empty())
    throw InputError("--hdf5: this build of ordex has no HDF5 (install libhdf5-dev and configure with -DORDEX_HDF5=ON)");
}
Hdf5Output::~Hdf5Output() = default;
int Hdf5Output::series(const std::string&, int, int) { return -1; }
void Hdf5Output::append(int, const Eigen::Ref<const Eigen::MatrixXd>&) {}
void Hdf5Output::append_value(int, double) {}
void Hdf5Output::finish(int) {}
void Hdf5Output::vector(const std::string&, const std::vector<double>&) {}
void Hdf5Output::strings(const std::string&, const std::vector<std::string>&) {}
void Hdf5Output::attributes(const Json&, const std::string&, const std::vector<std::string>&) {}
void Hdf5Output::commit() {}

#else

bool hdf5_available() { return true; }

namespace {

// Bytes of one chunk: large enough for fast sequential writes and reads, small enough that the
// library's chunk cache (1 MB a dataset by default) keeps memory flat whatever the file's size.
constexpr double kChunkBytes = 256.0 * 1024;

/// Closes an HDF5 identifier with the matching call when it goes out of scope.
class Handle {
 public:
  Handle(hid_t id, herr_t (*close)(hid_t)) : id_(id), close_(close) {}
  ~Handle() {
    if (id_ >= 0) close_(id_);
  }
  Handle(const Handle&) = delete;
  Handle& operator=(const Handle&) = delete;
  operator hid_t() const { return id_; }

 private:
  hid_t id_;
  herr_t (*close_)(hid_t);
};

}  // namespace

struct Hdf5Output::Impl {
  explicit Impl(const std::string& p) : path(p), out(p) {}
  std::string path;
  OutputFile out;  // the temporary (removed unless committed, also on SIGINT/SIGTERM) and the rename
  hid_t file = -1;
  struct Series {
    hid_t dataset = -1;
    int rank = 0;
    hsize_t rows = 0, cols = 0, count = 0;
    bool finished = false;  // finish() closed it
  };
  std::vector<Series> series;
  std::vector<double> buffer;  // one sample, row-major

  [[noreturn]] void fail(const std::string& what) const {
    throw InputError(path + ": cannot write HDF5 (" + what + ")");
  }
  void check(herr_t status, const std::string& what) const {
    if (status < 0) fail(what);
  }
  hid_t checked(hid_t id, const std::string& what) const {
    if (id < 0) fail(what);
    return id;
  }
  void close_all() {
    for (Series& s : series)
      if (s.dataset >= 0) H5Dclose(s.dataset), s.dataset = -1;
    if (file >= 0) H5Fclose(file), file = -1;
  }
};

Hdf5Output::Hdf5Output(const std::string& path) {
  if (path.empty()) return;
  if (is_stream_name(path)) throw InputError("--hdf5: " + path + " is a stream; HDF5 needs a file");
  auto impl = std::make_unique<Impl>(path);
  if (impl->out.temporary_path().empty())
    throw InputError("--hdf5: " + path + " is not a regular file; HDF5 needs one");
  H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);  // errors become one line, not a printed stack
  impl->file = impl->checked(H5Fcreate(impl->out.temporary_path().c_str(), H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT),
                             "create the file");
  impl_ = std::move(impl);
}

Hdf5Output::~Hdf5Output() {
  if (impl_) impl_->close_all();
}

int Hdf5Output::series(const std::string& name, int rows, int cols) {
  if (!impl_) return -1;
  Impl& m = *impl_;
  Impl::Series s;
  s.rank = cols > 0 ? 3 : rows > 0 ? 2 : 1;
  s.rows = static_cast<hsize_t>(s.rank >= 2 ? rows : 1);
  s.cols = static_cast<hsize_t>(std::max(cols, 1));
  if (rows < 0 || cols < 0) m.fail("negative size of " + name);
  const hsize_t per_sample = s.rows * s.cols;
  if (per_sample == 0) {  // an empty matrix (no inputs): nothing to store, appends are no-ops
    m.series.push_back(s);
    return static_cast<int>(m.series.size()) - 1;
  }
  const hsize_t chunk_samples =
      static_cast<hsize_t>(std::clamp(kChunkBytes / (8.0 * static_cast<double>(per_sample)), 1.0, 4096.0));
  const hsize_t dims[3] = {0, s.rows, s.cols}, maxdims[3] = {H5S_UNLIMITED, s.rows, s.cols};
  const hsize_t chunk[3] = {chunk_samples, s.rows, s.cols};
  Handle space(m.checked(H5Screate_simple(s.rank, dims, maxdims), "dataspace of " + name), H5Sclose);
  Handle dcpl(m.checked(H5Pcreate(H5P_DATASET_CREATE), "properties of " + name), H5Pclose);
  m.check(H5Pset_chunk(dcpl, s.rank, chunk), "chunks of " + name);
  Handle lcpl(m.checked(H5Pcreate(H5P_LINK_CREATE), "properties of " + name), H5Pclose);
  m.check(H5Pset_create_intermediate_group(lcpl, 1), "groups of " + name);
  s.dataset = m.checked(H5Dcreate2(m.file, name.c_str(), H5T_IEEE_F64LE, space, lcpl, dcpl, H5P_DEFAULT),
                        "create dataset " + name);
  m.series.push_back(s);
  return static_cast<int>(m.series.size()) - 1;
}

void Hdf5Output::append(int index, const Eigen::Ref<const Eigen::MatrixXd>& mat) {
  if (!impl_ || index < 0) return;
  Impl& m = *impl_;
  Impl::Series& s = m.series.at(static_cast<std::size_t>(index));
  if (s.finished) m.fail("a sample after the end of its series");
  if (s.dataset < 0) return;
  if (static_cast<hsize_t>(mat.size()) != s.rows * s.cols) m.fail("a sample of the wrong size");
  m.buffer.resize(static_cast<std::size_t>(mat.size()));
  for (Eigen::Index i = 0, k = 0; i < mat.rows(); ++i)  // row-major, like the CSV columns
    for (Eigen::Index j = 0; j < mat.cols(); ++j) m.buffer[static_cast<std::size_t>(k++)] = mat(i, j);
  const hsize_t dims[3] = {s.count + 1, s.rows, s.cols};
  m.check(H5Dset_extent(s.dataset, dims), "extend a dataset");
  Handle file_space(m.checked(H5Dget_space(s.dataset), "dataspace"), H5Sclose);
  const hsize_t start[3] = {s.count, 0, 0}, count[3] = {1, s.rows, s.cols};
  m.check(H5Sselect_hyperslab(file_space, H5S_SELECT_SET, start, nullptr, count, nullptr), "select a sample");
  Handle mem_space(m.checked(H5Screate_simple(s.rank, count, nullptr), "dataspace"), H5Sclose);
  m.check(H5Dwrite(s.dataset, H5T_NATIVE_DOUBLE, mem_space, file_space, H5P_DEFAULT, m.buffer.data()),
          "write a sample");
  ++s.count;
}

void Hdf5Output::finish(int index) {
  if (!impl_ || index < 0) return;
  Impl& m = *impl_;
  Impl::Series& s = m.series.at(static_cast<std::size_t>(index));
  if (s.dataset < 0) return;
  const herr_t status = H5Dclose(s.dataset);
  s.dataset = -1;
  s.finished = true;
  m.check(status, "close a dataset");
}

void Hdf5Output::append_value(int s, double x) {
  append(s, Eigen::Matrix<double, 1, 1>::Constant(x));
}

void Hdf5Output::vector(const std::string& name, const std::vector<double>& v) {
  if (!impl_) return;
  Impl& m = *impl_;
  const hsize_t dims[1] = {v.size()};
  Handle space(m.checked(H5Screate_simple(1, dims, nullptr), "dataspace of " + name), H5Sclose);
  Handle lcpl(m.checked(H5Pcreate(H5P_LINK_CREATE), "properties of " + name), H5Pclose);
  m.check(H5Pset_create_intermediate_group(lcpl, 1), "groups of " + name);
  Handle ds(m.checked(H5Dcreate2(m.file, name.c_str(), H5T_IEEE_F64LE, space, lcpl, H5P_DEFAULT, H5P_DEFAULT),
                      "create dataset " + name),
            H5Dclose);
  if (!v.empty()) m.check(H5Dwrite(ds, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, v.data()), "write " + name);
}

void Hdf5Output::strings(const std::string& name, const std::vector<std::string>& v) {
  if (!impl_) return;
  Impl& m = *impl_;
  std::vector<std::string> texts;
  for (const std::string& t : v) texts.push_back(utf8_escaped(t));
  std::vector<const char*> ptrs;
  for (const std::string& t : texts) ptrs.push_back(t.c_str());
  const hsize_t dims[1] = {v.size()};
  Handle type(m.checked(H5Tcopy(H5T_C_S1), "text type of " + name), H5Tclose);
  m.check(H5Tset_size(type, H5T_VARIABLE), "text type of " + name);
  m.check(H5Tset_cset(type, H5T_CSET_UTF8), "text type of " + name);
  Handle space(m.checked(H5Screate_simple(1, dims, nullptr), "dataspace of " + name), H5Sclose);
  Handle lcpl(m.checked(H5Pcreate(H5P_LINK_CREATE), "properties of " + name), H5Pclose);
  m.check(H5Pset_create_intermediate_group(lcpl, 1), "groups of " + name);
  Handle ds(m.checked(H5Dcreate2(m.file, name.c_str(), type, space, lcpl, H5P_DEFAULT, H5P_DEFAULT),
                      "create dataset " + name),
            H5Dclose);
  if (!ptrs.empty()) m.check(H5Dwrite(ds, type, H5S_ALL, H5S_ALL, H5P_DEFAULT, ptrs.data()), "write " + name);
}

namespace {

bool all_of_kind(const Json& a, bool (Json::*is)() const) {
  return !a.empty() && std::all_of(a.begin(), a.end(), [&](const Json& e) { return (e.*is)(); });
}

void write_attribute(const Hdf5Output::Impl& m, hid_t object, const std::string& key, const Json& v) {
  auto attribute = [&](hid_t type, hid_t space, const void* data) {
    Handle a(m.checked(H5Acreate2(object, key.c_str(), type, space, H5P_DEFAULT, H5P_DEFAULT), "attribute " + key),
             H5Aclose);
    m.check(H5Awrite(a, type, data), "attribute " + key);
  };
  Handle text_type(H5Tcopy(H5T_C_S1), H5Tclose);
  H5Tset_size(text_type, H5T_VARIABLE);
  H5Tset_cset(text_type, H5T_CSET_UTF8);
  Handle scalar(H5Screate(H5S_SCALAR), H5Sclose);
  if (v.is_boolean()) {
    const signed char b = v.get<bool>() ? 1 : 0;
    attribute(H5T_NATIVE_SCHAR, scalar, &b);
  } else if (v.is_number_integer()) {
    const long long i = v.get<long long>();
    attribute(H5T_NATIVE_LLONG, scalar, &i);
  } else if (v.is_number()) {
    const double d = v.get<double>();
    attribute(H5T_NATIVE_DOUBLE, scalar, &d);
  } else if (v.is_string()) {
    const std::string s = utf8_escaped(v.get<std::string>());
    const char* p = s.c_str();
    attribute(text_type, scalar, &p);
  } else if (v.is_array() && all_of_kind(v, &Json::is_string)) {
    std::vector<std::string> texts;
    for (const Json& e : v) texts.push_back(utf8_escaped(e.get<std::string>()));
    std::vector<const char*> ptrs;
    for (const std::string& t : texts) ptrs.push_back(t.c_str());
    const hsize_t dims[1] = {ptrs.size()};
    Handle space(H5Screate_simple(1, dims, nullptr), H5Sclose);
    attribute(text_type, space, ptrs.data());
  } else if (v.is_array() && std::all_of(v.begin(), v.end(), [](const Json& e) { return e.is_number() || e.is_null(); }) &&
             !v.empty() && !all_of_kind(v, &Json::is_null)) {
    std::vector<double> x;
    for (const Json& e : v) x.push_back(e.is_null() ? std::nan("") : e.get<double>());  // null: a non-finite value
    const hsize_t dims[1] = {x.size()};
    Handle space(H5Screate_simple(1, dims, nullptr), H5Sclose);
    attribute(H5T_NATIVE_DOUBLE, space, x.data());
  } else if (!v.is_null()) {
    const std::string s = dump_json(v);
    const char* p = s.c_str();
    attribute(text_type, scalar, &p);
  }
}

}  // namespace

void Hdf5Output::attributes(const Json& j, const std::string& object, const std::vector<std::string>& skip) {
  if (!impl_) return;
  Impl& m = *impl_;
  Handle obj(m.checked(H5Oopen(m.file, object.c_str(), H5P_DEFAULT), "open " + object), H5Oclose);
  for (auto it = j.begin(); it != j.end(); ++it) {
    if (std::find(skip.begin(), skip.end(), it.key()) != skip.end()) continue;
    write_attribute(m, obj, utf8_escaped(it.key()), it.value());
  }
}

void Hdf5Output::commit() {
  if (!impl_) return;
  Impl& m = *impl_;
  for (Impl::Series& s : m.series)
    if (s.dataset >= 0) {
      const herr_t status = H5Dclose(s.dataset);
      s.dataset = -1;
      m.check(status, "close a dataset");
    }
  const herr_t status = H5Fclose(m.file);
  m.file = -1;
  m.check(status, "close the file");
  m.out.commit();
}

#endif

}  // namespace ordex

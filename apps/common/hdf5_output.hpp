#pragma once
// Matrix series as HDF5 (--hdf5 PATH): named datasets written as they are computed, so memory
// does not grow with the file, and the summary's header as attributes. Layout: docs/plots.md.
//
// Each series is an extendible, chunked dataset of shape (samples, rows, cols) (or (samples,
// rows) for vectors), row-major like the CSV columns, appended one sample at a time. The file
// is written to a temporary beside PATH and renamed into place by commit(), like every output
// (io/output_file.hpp): complete or absent. The HDF5 library is optional at build time
// (ORDEX_HDF5); without it a non-empty path is refused with InputError.
#include <Eigen/Dense>
#include <boost/program_options.hpp>
#include <memory>
#include <string>
#include <vector>

#include "io/json.hpp"

namespace ordex {

/// Whether this build writes HDF5.
bool hdf5_available();

/// Adds --hdf5 PATH (bound to PATH) to DESC; WHAT says which series the app writes.
void add_hdf5_option(boost::program_options::options_description& desc, std::string& path, const std::string& what);

class Hdf5Output {
 public:
  /// Opens the temporary for PATH; an empty PATH makes an inactive writer whose calls do nothing.
  /// Throws InputError naming --hdf5 and PATH when it is standard output, a device or cannot be
  /// created, or when the build has no HDF5.
  explicit Hdf5Output(const std::string& path);
  ~Hdf5Output();
  Hdf5Output(const Hdf5Output&) = delete;
  Hdf5Output& operator=(const Hdf5Output&) = delete;

  explicit operator bool() const { return static_cast<bool>(impl_); }

  /// Starts the series NAME (a path such as "phi" or "run_1/x", groups created as needed) of
  /// ROWS x COLS matrices, shape (samples, ROWS, COLS); COLS = 0: vectors of ROWS entries,
  /// shape (samples, ROWS); ROWS = COLS = 0: numbers, shape (samples,). Returns its handle for
  /// append(). A series of empty matrices (a model without inputs) is not written.
  int series(const std::string& name, int rows = 0, int cols = 0);
  /// Appends one sample to series S: M is rows x cols (or a vector of rows entries).
  void append(int s, const Eigen::Ref<const Eigen::MatrixXd>& m);
  /// Ends series S: its last chunks go to the file and its buffers are freed (later appends
  /// to it are refused). Series still open are ended by commit().
  void finish(int s);
  /// Appends the number X to a series of numbers.
  void append_value(int s, double x);
  /// A one-dimensional dataset NAME holding V (the sample times).
  void vector(const std::string& name, const std::vector<double>& v);
  /// A one-dimensional dataset NAME of variable-length UTF-8 texts V (a table's text column;
  /// h5py: f[NAME].asstr()[:]).
  void strings(const std::string& name, const std::vector<std::string>& v);
  /// Attributes of OBJECT ("/" or a group or dataset already written) from the object J: a
  /// number, boolean or string becomes a scalar attribute, a list of numbers a number array, a
  /// list of strings a string array, anything else (objects, nested lists) its compact JSON text.
  /// Keys in SKIP are left out (the series the datasets already hold).
  void attributes(const Json& j, const std::string& object = "/", const std::vector<std::string>& skip = {});
  /// Closes the file and renames it into place; throws InputError on a write error.
  void commit();

  struct Impl;  // the open file and its series (hdf5_output.cpp)

 private:
  std::unique_ptr<Impl> impl_;
};

}  // namespace ordex

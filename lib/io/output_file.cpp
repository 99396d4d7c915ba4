#include "io/output_file.hpp"

#include <cstdio>
#include <iostream>
#include <unistd.h>

#include "io/errors.hpp"

namespace ordex {

OutputFile::OutputFile(const std::string& path) : path_(path) {
  if (path == "-") {
    to_stdout_ = true;
    return;
  }
  tmp_ = path + ".tmp-" + std::to_string(::getpid());
  file_.open(tmp_, std::ios::out | std::ios::trunc);
  if (!file_) throw InputError(path + ": cannot open for writing");
  file_.precision(17);
}

OutputFile::~OutputFile() {
  if (!to_stdout_ && !committed_) {
    file_.close();
    std::remove(tmp_.c_str());
  }
}

std::ostream& OutputFile::stream() { return to_stdout_ ? std::cout : file_; }

void OutputFile::commit() {
  if (to_stdout_) {
    std::cout.flush();
    committed_ = true;
    return;
  }
  file_.flush();
  bool ok = static_cast<bool>(file_);
  file_.close();
  if (!ok || std::rename(tmp_.c_str(), path_.c_str()) != 0) {
    std::remove(tmp_.c_str());
    throw InputError(path_ + ": cannot write");
  }
  committed_ = true;
}

void write_text_file(const std::string& path, const std::string& text) {
  OutputFile f(path);
  f.stream() << text;
  f.commit();
}

}  // namespace ordex

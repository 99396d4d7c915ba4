#include "model/input_selection.hpp"

#include <algorithm>

#include "io/errors.hpp"

namespace ordex {

InputSelection::InputSelection(const System& plant, std::vector<int> columns)
    : plant_(plant), columns_(std::move(columns)) {
  init();
}

InputSelection::InputSelection(std::unique_ptr<System> plant, std::vector<int> columns)
    : plant_(*plant), owned_(std::move(plant)), columns_(std::move(columns)) {
  init();
}

void InputSelection::init() {
  info_ = plant_.info();
  info_.input_names.clear();
  for (int c : columns_) {
    if (c < 0 || c >= plant_.inputs()) throw InputError("InputSelection: input index " + std::to_string(c) + " is out of range");
    info_.input_names.push_back(plant_.info().input_names[static_cast<std::size_t>(c)]);
  }
  full_.resize(std::max(plant_.states(), plant_.outputs()), plant_.inputs());
}

void InputSelection::B(double t, MatrixRef out) const {
  auto full = full_.topRows(plant_.states());
  plant_.B(t, full);
  for (std::size_t j = 0; j < columns_.size(); ++j) out.col(static_cast<Eigen::Index>(j)) = full.col(columns_[j]);
}

void InputSelection::D(double t, MatrixRef out) const {
  auto full = full_.topRows(plant_.outputs());
  plant_.D(t, full);
  for (std::size_t j = 0; j < columns_.size(); ++j) out.col(static_cast<Eigen::Index>(j)) = full.col(columns_[j]);
}

std::unique_ptr<System> InputSelection::clone() const {
  return std::make_unique<InputSelection>(plant_.clone(), columns_);
}

std::vector<int> parse_input_names(const System& sys, const std::string& names, const std::string& what) {
  const std::vector<std::string>& inputs = sys.info().input_names;
  std::string listing;
  for (const std::string& s : inputs) listing += (listing.empty() ? "" : ", ") + s;
  if (inputs.empty()) throw InputError(what + ": the model has no inputs");
  std::vector<int> out;
  std::size_t start = 0;
  while (start <= names.size()) {
    std::size_t end = names.find(',', start);
    if (end == std::string::npos) end = names.size();
    std::string name = names.substr(start, end - start);
    name.erase(0, name.find_first_not_of(" \t"));
    name.erase(name.find_last_not_of(" \t") + 1);
    if (name.empty()) throw InputError(what + ": an empty input name in '" + names + "' (the model's inputs: " + listing + ")");
    auto it = std::find(inputs.begin(), inputs.end(), name);
    if (it == inputs.end())
      throw InputError(what + ": unknown input " + quote_clipped(name) + " (the model's inputs: " + listing + ")");
    const int k = static_cast<int>(it - inputs.begin());
    if (std::find(out.begin(), out.end(), k) != out.end()) throw InputError(what + ": input '" + name + "' is named twice");
    out.push_back(k);
    start = end + 1;
  }
  return out;
}

}  // namespace ordex

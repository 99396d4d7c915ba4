#include "io/json.hpp"

#include <cmath>

#include "io/output_file.hpp"

namespace ordex {

Json number_to_json(double x) { return std::isfinite(x) ? Json(x) : Json(nullptr); }

Json to_json(const Eigen::MatrixXd& m) {
  Json rows = Json::array();
  for (Eigen::Index i = 0; i < m.rows(); ++i) {
    Json row = Json::array();
    for (Eigen::Index j = 0; j < m.cols(); ++j) row.push_back(number_to_json(m(i, j)));
    rows.push_back(std::move(row));
  }
  return rows;
}

Json vector_to_json(const Eigen::VectorXd& v) {
  Json a = Json::array();
  for (Eigen::Index i = 0; i < v.size(); ++i) a.push_back(number_to_json(v(i)));
  return a;
}

Json vector_to_json(const std::vector<double>& v) {
  Json a = Json::array();
  for (double x : v) a.push_back(number_to_json(x));
  return a;
}

namespace {

// Length of the well-formed UTF-8 sequence starting at s[i] (RFC 3629, table 3-7 of the Unicode
// standard: no overlong forms, no surrogates, nothing above U+10FFFF), or 0 when it is not one.
std::size_t utf8_sequence_length(const std::string& s, std::size_t i) {
  auto byte = [&](std::size_t k) { return static_cast<unsigned char>(s[k]); };
  const unsigned char c = byte(i);
  if (c < 0x80) return 1;
  std::size_t n;
  unsigned char lo = 0x80, hi = 0xBF;
  if (c >= 0xC2 && c <= 0xDF) n = 2;
  else if (c >= 0xE0 && c <= 0xEF) {
    n = 3;
    if (c == 0xE0) lo = 0xA0;
    if (c == 0xED) hi = 0x9F;
  } else if (c >= 0xF0 && c <= 0xF4) {
    n = 4;
    if (c == 0xF0) lo = 0x90;
    if (c == 0xF4) hi = 0x8F;
  } else {
    return 0;
  }
  if (i + n > s.size()) return 0;
  if (byte(i + 1) < lo || byte(i + 1) > hi) return 0;
  for (std::size_t k = 2; k < n; ++k)
    if (byte(i + k) < 0x80 || byte(i + k) > 0xBF) return 0;
  return n;
}

bool is_valid_utf8(const std::string& s) {
  for (std::size_t i = 0; i < s.size();) {
    std::size_t n = utf8_sequence_length(s, i);
    if (n == 0) return false;
    i += n;
  }
  return true;
}

// A copy of J whose strings (keys and values) are all valid UTF-8.
Json utf8_safe(const Json& j) {
  if (j.is_string()) {
    const std::string& s = j.get_ref<const std::string&>();
    return is_valid_utf8(s) ? j : Json(utf8_escaped(s));
  }
  if (j.is_array()) {
    Json out = Json::array();
    for (const Json& e : j) out.push_back(utf8_safe(e));
    return out;
  }
  if (j.is_object()) {
    Json out = Json::object();
    for (auto it = j.begin(); it != j.end(); ++it) out[utf8_escaped(it.key())] = utf8_safe(it.value());
    return out;
  }
  return j;
}

bool has_invalid_utf8(const Json& j) {
  if (j.is_string()) return !is_valid_utf8(j.get_ref<const std::string&>());
  if (j.is_array()) {
    for (const Json& e : j)
      if (has_invalid_utf8(e)) return true;
  } else if (j.is_object()) {
    for (auto it = j.begin(); it != j.end(); ++it)
      if (!is_valid_utf8(it.key()) || has_invalid_utf8(it.value())) return true;
  }
  return false;
}

}  // namespace

std::string utf8_escaped(const std::string& text) {
  static const char* hex = "0123456789ABCDEF";
  std::string out;
  out.reserve(text.size());
  for (std::size_t i = 0; i < text.size();) {
    std::size_t n = utf8_sequence_length(text, i);
    if (n == 0) {
      const unsigned char c = static_cast<unsigned char>(text[i]);
      out += "\\x";
      out += hex[c >> 4];
      out += hex[c & 15];
      ++i;
    } else {
      out.append(text, i, n);
      i += n;
    }
  }
  return out;
}

std::string dump_json(const Json& j, int indent) {
  // The common case (every string valid) costs one scan and no copy.
  return has_invalid_utf8(j) ? utf8_safe(j).dump(indent) : j.dump(indent);
}

void write_json_file(const std::string& path, const Json& j, int indent) {
  OutputFile f(path);
  f.stream() << dump_json(j, indent) << "\n";
  f.commit();
}

}  // namespace ordex

#include "sweep/sweep.hpp"

#include <algorithm>
#include <atomic>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <iomanip>
#include <limits>
#include <mutex>
#include <sstream>
#include <thread>

#include "io/errors.hpp"
#include "model/report_text.hpp"

namespace ordex {

std::unique_ptr<ExpressionSystem> make_sweep_system(const System& sys, const std::vector<std::string>& names) {
  const auto* model = dynamic_cast<const ExpressionSystem*>(&sys);
  if (!model) throw InputError("a sweep needs a model file (its parameters are what it varies)");
  return std::make_unique<ExpressionSystem>(model->spec(), names);
}

PointResult evaluate_point(System& sys, const SweepJob& job, const std::vector<double>& values, std::size_t k,
                           std::size_t nfigures) {
  PointResult r;
  try {
    r.figures = job.point_figures(sys, values, k);
    if (r.figures.size() != nfigures)
      throw std::logic_error("the job gave " + std::to_string(r.figures.size()) + " figures, expected " +
                             std::to_string(nfigures));
    return r;
  } catch (const std::bad_alloc&) {
    r.error = "out of memory";
  } catch (const std::exception& e) {
    r.error = e.what();
  } catch (...) {
    r.error = "unexpected failure";
  }
  if (r.error.empty()) r.error = "failed (no message)";
  r.figures.assign(nfigures, std::numeric_limits<double>::quiet_NaN());
  return r;
}

void OrderedResults::add(std::size_t position, PointResult result) {
  if (position != next_) {
    waiting_.emplace(position, std::move(result));
    return;
  }
  emit_(next_++, result);
  // Hand on whatever was waiting for this one.
  for (auto it = waiting_.begin(); it != waiting_.end() && it->first == next_; it = waiting_.erase(it))
    emit_(next_++, it->second);
}

void run_points_on_threads(const System& base, const SweepJobFactory& make_job, const SweepPoints& points,
                           const std::vector<std::size_t>& todo, int threads,
                           const std::function<void(std::size_t k, const PointResult&)>& emit) {
  if (todo.empty()) return;
  const std::size_t nthreads = std::max<std::size_t>(1, std::min<std::size_t>(static_cast<std::size_t>(std::max(threads, 1)), todo.size()));
  std::atomic<std::size_t> next{0};
  std::atomic<bool> stop{false};
  std::mutex mutex;
  std::exception_ptr failure;
  OrderedResults ordered([&](std::size_t position, const PointResult& r) { emit(todo[position], r); });
  auto worker = [&] {
    try {
      std::unique_ptr<System> sys = base.clone();
      const std::unique_ptr<SweepJob> job = make_job();
      const std::size_t nfig = job->figure_names(*sys).size();
      for (;;) {
        if (stop) return;
        const std::size_t i = next++;
        if (i >= todo.size()) return;
        PointResult r = evaluate_point(*sys, *job, points.values(todo[i]), todo[i], nfig);
        std::lock_guard<std::mutex> lock(mutex);
        if (stop) return;
        ordered.add(i, std::move(r));
      }
    } catch (...) {
      std::lock_guard<std::mutex> lock(mutex);
      if (!failure) failure = std::current_exception();
      stop = true;
    }
  };
  if (nthreads == 1) {
    worker();
  } else {
    std::vector<std::thread> pool;
    for (std::size_t t = 0; t < nthreads; ++t) pool.emplace_back(worker);
    for (std::thread& t : pool) t.join();
  }
  if (failure) std::rethrow_exception(failure);
}

namespace {

std::string number_text(double x) {
  if (std::isnan(x)) return "nan";
  if (std::isinf(x)) return x > 0 ? "inf" : "-inf";
  // The shortest text that reads back to the same double (round trip), as numpy prints.
  char buf[40];
  const std::to_chars_result r = std::to_chars(buf, buf + sizeof buf, x);
  return std::string(buf, r.ptr);
}

std::string csv_field(std::string text) {
  for (char& c : text)
    if (c == '\n' || c == '\r') c = ' ';
  if (text.find_first_of(",\"") == std::string::npos) return text;
  std::string q = "\"";
  for (char c : text) {
    if (c == '"') q += '"';
    q += c;
  }
  return q + "\"";
}

}  // namespace

std::string sweep_header(const std::vector<std::string>& parameters, const std::vector<std::string>& figures) {
  std::string h;
  for (const std::string& p : parameters) h += p + ",";
  for (const std::string& f : figures) h += f + ",";
  return h + "error";
}

std::string sweep_row_prefix(const std::vector<double>& values) {
  std::string s;
  for (double v : values) s += number_text(v) + ",";
  return s;
}

std::string sweep_row(const std::vector<double>& values, const PointResult& result) {
  std::string s = sweep_row_prefix(values);
  for (double f : result.figures) s += number_text(f) + ",";
  return s + csv_field(result.error);
}

PointResult parse_sweep_row(const std::string& row, std::size_t nvalues, std::size_t nfigures) {
  PointResult r;
  std::size_t at = 0;
  for (std::size_t i = 0; i < nvalues + nfigures; ++i) {
    const std::size_t comma = row.find(',', at);
    if (comma == std::string::npos)
      throw InputError("a sweep row with fewer than " + std::to_string(nvalues + nfigures + 1) + " fields: '" + row + "'");
    const std::string field = row.substr(at, comma - at);
    char* end = nullptr;
    const double x = std::strtod(field.c_str(), &end);  // "nan", "inf", "-inf" and to_chars' text
    if (field.empty() || end != field.c_str() + field.size())
      throw InputError("a sweep row with '" + field + "' where a number belongs: '" + row + "'");
    if (i >= nvalues) r.figures.push_back(x);
    at = comma + 1;
  }
  const std::string rest = row.substr(at);
  if (rest.empty() || rest.front() != '"') {
    r.error = rest;
    return r;
  }
  for (std::size_t i = 1; i < rest.size(); ++i) {  // a quoted field: "" stands for "
    if (rest[i] == '"') {
      if (i + 1 < rest.size() && rest[i + 1] == '"') ++i;
      else if (i + 1 == rest.size()) return r;
      else break;
    }
    r.error += rest[i];
  }
  throw InputError("a sweep row with a malformed error field: '" + row + "'");
}

std::vector<std::string> resumable_rows(const std::string& text, const std::string& path, const std::string& header,
                                        const SweepPoints& points) {
  std::vector<std::string> rows;
  std::size_t at = text.find('\n');
  if (at == std::string::npos) return rows;  // not even a whole header: nothing to keep
  if (text.substr(0, at) != header)
    throw InputError(path + ": line 1: its columns are not those of this sweep (expected '" + header +
                     "'): it comes from another sweep; remove it or leave out SweepOptions::resume");
  for (std::size_t start = at + 1;;) {
    const std::size_t end = text.find('\n', start);
    if (end == std::string::npos) break;  // an unfinished last line is computed again
    const std::string line = text.substr(start, end - start);
    const std::size_t k = rows.size();
    if (k >= points.size())
      throw InputError(path + ": line " + std::to_string(k + 2) + ": more rows than the sweep's " +
                       std::to_string(points.size()) + " points: it comes from another sweep");
    if (line.rfind(sweep_row_prefix(points.values(k)), 0) != 0)
      throw InputError(path + ": line " + std::to_string(k + 2) + ": not point " + std::to_string(k + 1) +
                       " of this sweep (its parameters differ): it comes from another sweep; remove it or leave out "
                       "SweepOptions::resume");
    rows.push_back(line);
    start = end + 1;
  }
  return rows;
}

Json plan_json(const SweepPoints& points) {
  Json j;
  if (points.is_grid()) {
    Json axes = Json::array();
    for (const GridAxis& a : points.axes()) {
      Json x;
      x["name"] = a.name;
      x["from"] = a.from;
      x["to"] = a.to;
      x["count"] = a.count;
      axes.push_back(x);
    }
    j["axes"] = axes;
    return j;
  }
  Json d = Json::array();
  for (const SampleDistribution& s : points.plan()) {
    Json x;
    x["name"] = s.name;
    if (s.kind == SampleDistribution::Kind::Normal) {
      x["distribution"] = "normal";
      x["mean"] = s.a;
      x["sd"] = s.b;
    } else {
      x["distribution"] = "uniform";
      x["low"] = s.a;
      x["high"] = s.b;
    }
    d.push_back(x);
  }
  j["distributions"] = d;
  j["runs"] = points.size();
  j["seed"] = points.seed();
  return j;
}

Json SweepReport::to_json() const {
  Json j = header.to_json();
  j["job"] = job;
  j["job_settings"] = job_settings;
  j["parameters"] = parameters;
  j["figures"] = figures;
  j["points_from"] = points_from;
  j["plan"] = plan;
  j["points"] = points;
  j["computed"] = computed;
  j["resumed"] = resumed;
  j["failed"] = failed;
  Json f = Json::array();
  for (const auto& [k, message] : first_failures) {
    Json x;
    x["point"] = k + 1;
    x["error"] = message;
    f.push_back(x);
  }
  j["first_failures"] = f;
  j["threads"] = threads;
  j["ranks"] = ranks;
  j["seconds"] = seconds;
  return j;
}

std::string SweepReport::brief() const {
  std::ostringstream o;
  o << "Sweep of " << job << " over ";
  for (std::size_t i = 0; i < parameters.size(); ++i) o << (i ? ", " : "") << parameters[i];
  o << " (" << points_from << "): " << points << " points, " << computed << " computed, " << resumed
    << " resumed, " << failed << " failed";
  o << " on " << (ranks > 1 ? std::to_string(ranks) + " ranks" : std::to_string(threads) + " thread" + (threads > 1 ? "s" : ""));
  o << ", " << std::fixed << std::setprecision(2) << seconds << " s\n";
  for (const auto& [k, message] : first_failures) o << "  point " << k + 1 << " failed: " << message << "\n";
  return o.str();
}

}  // namespace ordex

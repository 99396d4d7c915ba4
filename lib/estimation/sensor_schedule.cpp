#include "estimation/sensor_schedule.hpp"

#include <algorithm>
#include <cmath>

#include "io/errors.hpp"
#include "io/input_file.hpp"
#include "riccati/weight_reading.hpp"

namespace ordex {

using namespace weight_detail;

namespace {

// A schedule with more updates than this is a typo in `every` (1e-9 instead of 1e-1).
constexpr double kMaxUpdatesPerSensor = 1e7;

std::string window_text(double t0, double t1) { return "[" + format_number(t0) + ", " + format_number(t1) + "]"; }

double time_value(const toml::node& node, const std::string& what) {
  if (auto v = node.as_integer()) return static_cast<double>(v->get());
  if (auto v = node.as_floating_point())
    if (std::isfinite(v->get())) return v->get();
  throw InputError(what + ": expected a finite number");
}

}  // namespace

std::vector<int> sensor_output_indices(const Sensor& sensor, const System& sys) {
  const auto& names = sys.info().output_names;
  std::vector<int> idx;
  for (std::size_t i = 0; i < sensor.outputs.size(); ++i) {
    const auto it = std::find(names.begin(), names.end(), sensor.outputs[i]);
    if (it == names.end()) {
      std::string known;
      for (const auto& n : names) known += (known.empty() ? "" : ", ") + n;
      throw InputError(sensor.name + ".outputs[" + std::to_string(i + 1) + "]: the model has no output " +
                       quote_clipped(sensor.outputs[i]) +
                       (known.empty() ? " (it has no outputs)" : " (its outputs: " + known + ")"));
    }
    idx.push_back(static_cast<int>(it - names.begin()));
  }
  return idx;
}

std::vector<double> every_times(double every, double t0, double t1, const std::string& what) {
  if (!(every > 0) || !std::isfinite(every)) throw InputError(what + ": " + format_number(every) + " must be positive");
  const double count = std::floor((t1 - t0) / every * (1 + 1e-12));
  if (!(count < kMaxUpdatesPerSensor))
    throw InputError(what + ": " + format_number(every) + " makes more than 10^7 updates over " + window_text(t0, t1));
  std::vector<double> times;
  for (long k = 0; k <= static_cast<long>(count); ++k) times.push_back(std::min(t1, t0 + k * every));
  return times;
}

SensorSchedule load_sensor_schedule(const std::string& path, const System& sys, double t0, double t1) {
  const std::string text = read_text_file(path, "sensor schedule", input_limits().max_toml_bytes);
  const toml::table table = parse_toml_text(text, path);
  for (const auto& [k, node] : table)
    if (k.str() != "measurement")
      throw InputError(path + ": unknown key " + quote_clipped(std::string(k.str())) +
                       " (a sensor schedule has [[measurement]] tables)");
  const toml::array* list = table.get_as<toml::array>("measurement");
  if (!list || list->empty())
    throw InputError(path + ": measurement: no [[measurement]] table (each names outputs, times or every, and Rn)");
  SensorSchedule schedule;
  schedule.source = path;
  for (std::size_t s = 0; s < list->size(); ++s) {
    const std::string name = path + ": measurement[" + std::to_string(s + 1) + "]";
    const toml::table* m = (*list)[s].as_table();
    if (!m) throw InputError(name + ": expected a table");
    for (const auto& [k, node] : *m) {
      const std::string key(k.str());
      if (key != "outputs" && key != "times" && key != "every" && key != "Rn")
        throw InputError(name + ": unknown key " + quote_clipped(key) + " (a measurement has outputs, times or every, Rn)");
    }
    Sensor sensor;
    sensor.name = name;
    const toml::array* outs = m->get_as<toml::array>("outputs");
    if (!outs || outs->empty()) throw InputError(name + ".outputs: expected a non-empty list of output names");
    for (std::size_t i = 0; i < outs->size(); ++i) {
      const auto* o = (*outs)[i].as_string();
      if (!o) throw InputError(name + ".outputs[" + std::to_string(i + 1) + "]: expected an output name (a string)");
      if (std::count(sensor.outputs.begin(), sensor.outputs.end(), o->get()))
        throw InputError(name + ".outputs[" + std::to_string(i + 1) + "]: output " + quote_clipped(o->get()) +
                         " is named twice");
      sensor.outputs.push_back(o->get());
    }
    sensor_output_indices(sensor, sys);
    const bool has_times = m->contains("times"), has_every = m->contains("every");
    if (has_times == has_every) throw InputError(name + ": give times (a list) or every (a spacing), one of them");
    if (has_times) {
      const toml::array* times = m->get_as<toml::array>("times");
      if (!times || times->empty()) throw InputError(name + ".times: expected a non-empty list of times");
      for (std::size_t i = 0; i < times->size(); ++i)
        sensor.times.push_back(time_value((*times)[i], name + ".times[" + std::to_string(i + 1) + "]"));
      for (std::size_t i = 1; i < sensor.times.size(); ++i)
        if (sensor.times[i] < sensor.times[i - 1])
          throw InputError(name + ".times[" + std::to_string(i + 1) + "]: " + format_number(sensor.times[i]) +
                           " comes before the time listed ahead of it (times must be ascending)");
    } else {
      sensor.times = every_times(time_value(*m->get("every"), name + ".every"), t0, t1, name + ".every");
    }
    const toml::node* rn = m->get("Rn");
    if (!rn) throw InputError(name + ".Rn: missing (the noise covariance of the outputs measured)");
    const int k = static_cast<int>(sensor.outputs.size());
    sensor.Rn = read_weight_matrix(*rn, path, "measurement[" + std::to_string(s + 1) + "].Rn", k, k);
    schedule.sensors.push_back(std::move(sensor));
  }
  schedule_updates(schedule, sys, t0, t1);  // every remaining check, with the file's names
  return schedule;
}

std::vector<ScheduledUpdate> schedule_updates(const SensorSchedule& schedule, const System& sys, double t0, double t1,
                                              const WeightCheckOptions& tol) {
  tol.validate();
  std::vector<ScheduledUpdate> updates;
  const double slack = 1e-12 * std::max(1.0, std::max(std::abs(t0), std::abs(t1)));
  for (std::size_t s = 0; s < schedule.sensors.size(); ++s) {
    const Sensor& sensor = schedule.sensors[s];
    const std::string name = sensor.name.empty() ? "sensor " + std::to_string(s + 1) : sensor.name;
    if (sensor.outputs.empty()) throw InputError(name + ".outputs: no output named");
    sensor_output_indices(sensor, sys);
    const int k = static_cast<int>(sensor.outputs.size());
    if (sensor.Rn.rows() != k || sensor.Rn.cols() != k)
      throw InputError(name + ".Rn: " + std::to_string(sensor.Rn.rows()) + " x " + std::to_string(sensor.Rn.cols()) +
                       ", expected " + std::to_string(k) + " x " + std::to_string(k) + " (one row per output measured)");
    Eigen::MatrixXd R(k, k);
    for (std::size_t i = 0; i < sensor.times.size(); ++i) {
      const double t = sensor.times[i];
      const std::string what = name + ".times[" + std::to_string(i + 1) + "]";
      if (!std::isfinite(t) || t < t0 - slack || t > t1 + slack)
        throw InputError(what + ": " + format_number(t) + " is outside the window " + window_text(t0, t1));
      if (i > 0 && t < sensor.times[i - 1]) throw InputError(what + ": times must be ascending");
      if (i == 0 || !sensor.Rn.is_constant()) {
        sensor.Rn.eval(t, R);
        require_symmetric(R, name + ".Rn", t, tol.symmetry_tolerance);
        auto [rmin, rmax] = eigen_range(R);
        if (!(rmin > tol.definiteness_tolerance * std::max(1.0, rmax)))
          throw InputError(name + ".Rn: not positive definite at t = " + format_number(t) + " (smallest eigenvalue " +
                           format_number(rmin) + "; every measured output needs noise)");
      }
      updates.push_back({std::min(std::max(t, t0), t1), s});
    }
  }
  // Stable: at one time, sensors keep the order in which they are listed.
  std::stable_sort(updates.begin(), updates.end(),
                   [](const ScheduledUpdate& a, const ScheduledUpdate& b) { return a.t < b.t; });
  return updates;
}

}  // namespace ordex

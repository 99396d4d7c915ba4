#pragma once
// The sensor schedule of a covariance analysis (CONTRACT.md ordex-estimate --measurements):
// sensors, each measuring some of the model's outputs together at given times with a noise
// covariance. Sensors that measure at the same time are applied in the order they are listed.
#include <string>
#include <vector>

#include "model/system.hpp"
#include "riccati/weights.hpp"

namespace ordex {

struct Sensor {
  std::vector<std::string> outputs;  ///< the model outputs measured together
  std::vector<double> times;         ///< when, ascending, inside the window
  WeightMatrix Rn;                   ///< their noise covariance (k x k, k = outputs.size())
  std::string name;                  ///< for messages: "PATH: measurement[2]" or "sensor 2"
};

struct SensorSchedule {
  std::vector<Sensor> sensors;
  std::string source = "code";  ///< the schedule file, or "code"
};

/// Reads a schedule: [[measurement]] tables with outputs (names), times (a list) or every (a
/// spacing: t0, t0 + every, ... up to t1) and Rn (a matrix, or a flat list meaning a
/// diagonal; entries numbers or expressions of t). Every mistake throws InputError
/// "PATH: measurement[i].KEY: what is wrong" (an unknown output, a time outside [T0, T1]).
SensorSchedule load_sensor_schedule(const std::string& path, const System& sys, double t0, double t1);

/// The times of a sensor that reads every EVERY: t0, t0 + every, ... up to T1 (the last multiple
/// inside the window, within a relative 1e-12). InputError naming WHAT for a spacing that is not
/// positive or makes more than 10^7 readings.
std::vector<double> every_times(double every, double t0, double t1, const std::string& what);

/// One measurement update: at T, sensor SENSOR of the schedule.
struct ScheduledUpdate {
  double t = 0;
  std::size_t sensor = 0;
};

/// Checks SCHEDULE against SYS and [T0, T1] (output names, sizes, times inside the window, Rn
/// symmetric positive definite at each of its times; TOL as WeightCheckOptions) and returns
/// its updates in time order, those at one time in the order of the sensors. Throws InputError
/// naming the sensor and key.
std::vector<ScheduledUpdate> schedule_updates(const SensorSchedule& schedule, const System& sys, double t0, double t1,
                                              const WeightCheckOptions& tol = {});

/// The output indices of SENSOR in SYS (InputError for an unknown name).
std::vector<int> sensor_output_indices(const Sensor& sensor, const System& sys);

}  // namespace ordex

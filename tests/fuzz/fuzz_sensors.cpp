// The sensor schedule of ordex-estimate --measurements (TOML: [[measurement]] tables with
// outputs, times or every, Rn) for a plant with outputs "p" and "v" over the window [0, 10].
#include <ordex/estimation/sensor_schedule.hpp>
#include <ordex/io/errors.hpp>
#include <ordex/model/function_system.hpp>

#include "fuzz_file.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  static ordex::FunctionSystem sys = [] {
    ordex::FunctionSystem s({"x", "v"});
    s.set_A([](double, ordex::MatrixRef m) { m << 0, 1, -1, -0.1; });
    s.set_C({"p", "v"}, [](double, ordex::MatrixRef m) { m.setIdentity(); });
    return s;
  }();
  const std::string path = ordex_fuzz::write("sensors.toml", data, size);
  try {
    ordex::SensorSchedule s = ordex::load_sensor_schedule(path, sys, 0.0, 10.0);
    ordex::schedule_updates(s, sys, 0.0, 10.0);
  } catch (const ordex::Error&) {
  }
  return 0;
}

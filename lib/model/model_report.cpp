#include "model/model_report.hpp"

#include <sstream>

#include "io/errors.hpp"
#include "model/expression_system.hpp"

namespace ordex {

ModelReport describe_model(const System& sys) {
  ModelReport r;
  const SystemInfo& info = sys.info();
  r.source = info.source;
  r.title = info.title;
  r.states = info.state_names;
  r.inputs = info.input_names;
  r.outputs = info.output_names;
  r.period = info.period;
  r.window = info.window;
  r.breakpoints = static_cast<int>(info.breakpoints.size());
  const int n = sys.states(), m = sys.inputs(), p = sys.outputs();
  r.entries = n * n + n * m + p * n + p * m;
  if (const auto* es = dynamic_cast<const ExpressionSystem*>(&sys)) {
    r.parameters = es->spec().parameters;
    r.time_varying_entries = es->time_varying_entries();
    for (const TableSpec& ts : es->spec().tables) {
      const TimeTable& t = *ts.table;
      r.tables.push_back({t.path(), to_string(t.options().interpolation), to_string(t.options().outside),
                          t.columns(), static_cast<int>(t.times().size()), t.first_time(), t.last_time()});
    }
  }
  return r;
}

Json ModelReport::to_json() const {
  Json j;
  j["source"] = source;
  j["title"] = title;
  j["states"] = states;
  j["inputs"] = inputs;
  j["outputs"] = outputs;
  Json params = Json::object();
  for (const auto& p : parameters) params[p.first] = p.second;
  j["parameters"] = params;
  j["period"] = period ? Json(*period) : Json(nullptr);
  j["window"] = window ? Json::array({window->first, window->second}) : Json(nullptr);
  j["breakpoints"] = breakpoints;
  j["entries"] = entries;
  j["time_varying_entries"] = time_varying_entries >= 0 ? Json(time_varying_entries) : Json(nullptr);
  Json tabs = Json::array();
  for (const Table& t : tables)
    tabs.push_back({{"file", t.file}, {"interpolation", t.interpolation}, {"outside", t.outside},
                    {"columns", t.columns}, {"rows", t.rows}, {"first", t.first}, {"last", t.last}});
  j["tables"] = tabs;
  return j;
}

std::string ModelReport::brief() const {
  std::ostringstream o;
  o << "model: " << (title.empty() ? source : title) << " (" << states.size() << " states, "
    << inputs.size() << " inputs, " << outputs.size() << " outputs)\n";
  if (!parameters.empty()) {
    o << "parameters:";
    for (const auto& p : parameters) o << " " << p.first << "=" << format_number(p.second);
    o << "\n";
  }
  for (const Table& t : tables)
    o << "table: " << t.file << " (" << t.rows << " rows, t in [" << format_number(t.first) << ", "
      << format_number(t.last) << "], " << t.interpolation << ")\n";
  return o.str();
}

ReportHeader report_header(const System& sys, double t0, double t1, const std::string& method) {
  const SystemInfo& info = sys.info();
  ReportHeader h;
  h.title = info.title;
  h.source = info.source;
  h.parameters = info.parameters;
  h.t0 = t0;
  h.t1 = t1;
  h.method = method;
  return h;
}

Json ReportHeader::to_json() const {
  Json params = Json::object();
  for (const auto& p : parameters) params[p.first] = number_to_json(p.second);
  Json j;
  j["ordex_version"] = ORDEX_VERSION;
  j["model"] = {{"title", title}, {"source", source}, {"parameters", params}};
  j["t0"] = number_to_json(t0);
  j["t1"] = number_to_json(t1);
  j["method"] = method;
  return j;
}

Json with_app(const std::string& app, const Json& summary) {
  Json j;
  j["app"] = app;
  for (auto it = summary.begin(); it != summary.end(); ++it)
    if (it.key() != "app") j[it.key()] = it.value();
  return j;
}

}  // namespace ordex

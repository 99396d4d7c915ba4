#pragma once
// Loading a model file (TOML, CONTRACT.md "Model file"; tabulated models in docs/models.md).
#include <map>
#include <memory>
#include <string>
#include <vector>

#include "model/system.hpp"

namespace ordex {

/// Parameter overrides from --set NAME=VALUE (VALUE already parsed to a number).
using ParameterOverrides = std::map<std::string, double>;

/// Loads PATH. Expressions are parsed once here; evaluation afterwards allocates nothing.
/// Every mistake throws InputError "PATH: KEY: what is wrong", for example
/// "models/x.toml: matrices.A[2][1]: unknown symbol 'omeg'". An override whose NAME is not in
/// [parameters] is an error.
std::unique_ptr<System> load_model(const std::string& path, const ParameterOverrides& overrides = {});

struct ModelSpec;  // model/expression_system.hpp

/// The sections every kind of model file shares ([system], [parameters] with OVERRIDES,
/// [define] as text, [table], [window]), checked as load_model checks them, for a layer above
/// that reads its own sections OWN_SECTIONS (for example [dynamics] and [nominal] of a nonlinear
/// model); [matrices] is then an unknown section. The spec's matrices stay absent.
ModelSpec read_model_parts(const std::string& path, const ParameterOverrides& overrides,
                           const std::vector<std::string>& own_sections);

/// True when PATH is a TOML file with a top-level SECTION. Throws InputError when PATH cannot be
/// read or is not valid TOML ("PATH:LINE:COLUMN: TOML syntax error: ...", as the loader says).
bool model_file_has_section(const std::string& path, const std::string& section);

/// Parses "NAME=VALUE" (VALUE a number or an expression of numbers and pi).
/// Throws InputError naming the text on failure.
std::pair<std::string, double> parse_override(const std::string& text);

/// Evaluates an expression of numbers, pi and the functions of CONTRACT.md (no t, no
/// parameters), for command-line values such as --to 2*pi. WHAT names the value in messages.
double evaluate_constant(const std::string& text, const std::string& what);

}  // namespace ordex

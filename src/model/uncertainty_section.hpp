// The [uncertainty] table of model files (docs/uncertainty.md): reading it with every check
// (parameters the profile has, a symmetric positive semi-definite covariance, one 1σ per table
// point) and writing it back.
#pragma once

#include "io/toml_reader.hpp"
#include "io/toml_writer.hpp"
#include "model/firn_model.hpp"

namespace firnray {

// Reads [uncertainty] for the profile already read. Throws ModelInputError at the key.
ModelUncertainty read_uncertainty_section(const TomlTable& table, const IndexProfile& profile);

// Writes [uncertainty] (nothing when `uncertainty` is empty of both parts).
void write_uncertainty_section(const ModelUncertainty& uncertainty, TomlWriter& out);

// Checks a covariance for `names`: square, finite, symmetric within 1e-9 of its largest
// diagonal element, positive semi-definite within 1e-9 of its largest eigenvalue. Throws
// ModelInputError at `where`, saying which element or which eigenvalue is wrong.
void check_parameter_covariance(const ParameterCovariance& covariance, const InputLocation& where);

}  // namespace firnray

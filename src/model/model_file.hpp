// Loading site models from TOML files (schema in docs/model-files.md) and the built-in default,
// and writing them back. Every problem in a file, including a value outside the bounds of
// model/model_limits.hpp, is a ModelInputError naming the file, the line and the key.
#pragma once

#include <string>
#include <string_view>

#include "model/firn_model.hpp"

namespace firnray {

// Reads a model file. Table files named inside it are resolved relative to the model file.
FirnModel load_model_file(const std::string& path);

// Parses model text; `origin` is used in messages and to resolve relative table paths.
FirnModel parse_model(const std::string& toml_text, const std::string& origin);

// Generic polar firn with values inside published ranges (docs/physics.md §1.2); not a real site.
FirnModel default_model();

// The text of the built-in model, exactly as in models/default.toml.
std::string_view default_model_toml();

// Writes a model as model-file text that parse_model reads back to the same model. Tables are
// written inline. `comment` (may be empty, may hold several lines) goes at the top as # lines.
// Throws OutputError for a profile kind that model files cannot express (one made in code).
std::string model_to_toml(const FirnModel& model, const std::string& comment = "");

}  // namespace firnray

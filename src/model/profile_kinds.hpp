// The profile kinds a model file can hold, each with its keys, its reader and its writer, in one
// registry: adding a kind of index or attenuation profile means adding one entry here (see
// DEVELOPERS.md, "Adding an index model kind"). Used by model/model_file.cpp.
#pragma once

#include <memory>
#include <string>
#include <vector>

#include "io/toml_reader.hpp"
#include "io/toml_writer.hpp"
#include "model/firn_model.hpp"
#include "model/point_table.hpp"

namespace firnray {

struct IndexKind {
    std::string name;               // the value of `kind` in [index], and IndexProfile::kind()
    std::vector<std::string> keys;  // every key of [index] with this kind, "kind" included
    // Reads [index]; throws ModelInputError located in the file.
    std::shared_ptr<const IndexProfile> (*read)(const TomlTable& index, ModelFileContext& context);
    // Writes the keys of [index] (and any sub-tables) for a profile whose kind() is `name`.
    void (*write)(const IndexProfile& profile, TomlWriter& out);
};

struct AttenuationKind {
    std::string name;  // the value of `kind` in [attenuation], and AttenuationProfile::kind()
    std::vector<std::string> keys;
    std::shared_ptr<const AttenuationProfile> (*read)(const TomlTable& attenuation, ModelFileContext& context);
    void (*write)(const AttenuationProfile& profile, TomlWriter& out);
};

const std::vector<IndexKind>& index_kinds();
const std::vector<AttenuationKind>& attenuation_kinds();

// Reads [index] or [attenuation] with the kind its `kind` key names.
std::shared_ptr<const IndexProfile> read_index_profile(const TomlTable& index, ModelFileContext& context);
std::shared_ptr<const AttenuationProfile> read_attenuation_profile(const TomlTable& attenuation,
                                                                   ModelFileContext& context);

// Writes the body of [index] or [attenuation]; throws OutputError for a kind model files cannot
// express (a profile made in code, outside this registry).
void write_index_profile(const IndexProfile& profile, TomlWriter& out);
void write_attenuation_profile(const AttenuationProfile& profile, TomlWriter& out);

}  // namespace firnray

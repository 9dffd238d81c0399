#include "model/model_file.hpp"

#include <filesystem>

#include <fmt/format.h>

#include "core/errors.hpp"
#include "io/toml_reader.hpp"
#include "io/toml_writer.hpp"
#include "model/model_limits.hpp"
#include "model/point_table.hpp"
#include "model/profile_kinds.hpp"
#include "model/uncertainty_section.hpp"

namespace firnray {

namespace {

// The built-in model; models/default.toml is a byte-for-byte copy (a test checks it).
constexpr std::string_view built_in_model_text =
    R"toml(# The firnray built-in model: generic polar firn, not a real site.
# Its values lie inside the published ranges for polar firn (from memory): n_deep 1.77-1.78,
# n_surface 1.30-1.40, scale depth 30-80 m. Radio attenuation lengths of order 1 km in cold polar
# ice are common practice. There is no bottom: the ice goes on below any depth asked about.
name = "generic polar firn (built-in; not a real site)"

[index]
kind = "exponential"
n_deep = 1.78
n_surface = 1.35
scale_depth_m = 37.0

[air]
n = 1.0

[attenuation]
kind = "constant"
length_m = 1000.0
)toml";

double read_air_index(const TomlTable& air) {
    air.allow_only({"n"}, "in [air]");
    return air.number("n", "n, the index of the air (usually 1.0)", model_limits::index);
}

Bottom read_bottom(const TomlTable& t, ModelFileContext& context) {
    t.allow_only({"depth_m", "z_m", "power_reflectivity"}, "in [bottom]");
    const std::string_view key = t.one_of("depth_m", "z_m", "depth_m (positive down) or z_m (up positive) of the bottom");
    const bool z_style = key == "z_m";
    context.note_vertical(t, key, z_style ? "z" : "depth");
    const double value = t.number(key, "the bottom's position");
    Bottom bottom;
    bottom.z_m = z_style ? value : -value;
    if (!(bottom.z_m < 0.0))
        t.fail(key, z_style ? fmt::format("z_m = {} is not below the surface (the ice is z < 0)", value)
                            : fmt::format("depth_m = {} is not below the surface (depths are positive)", value));
    TomlTable::check_range(value, t.where(key), key, z_style ? model_limits::height : model_limits::depth);
    bottom.power_reflectivity = t.number("power_reflectivity", "power_reflectivity, the fraction of power reflected (0 to 1)",
                                         model_limits::power_reflectivity);
    return bottom;
}

FirnModel read_model(const TomlDocument& document) {
    const std::string& origin = document.origin();
    ModelFileContext context(origin);
    const TomlTable top = document.root();
    top.allow_only({"name", "index", "air", "attenuation", "bottom", "uncertainty"}, "at the top level");

    FirnModel model;
    model.origin = origin;
    model.name = top.optional_text("name").value_or(std::filesystem::path(origin).stem().string());
    if (model.name.empty()) top.fail("name", "must not be empty");

    const auto index = top.optional_table("index");
    if (!index) top.fail("index", "missing: the file needs an [index] table with the index profile");
    model.index = read_index_profile(*index, context);
    if (const auto air = top.optional_table("air")) model.n_air = read_air_index(*air);
    if (const auto attenuation = top.optional_table("attenuation"))
        model.attenuation = read_attenuation_profile(*attenuation, context);
    if (const auto bottom = top.optional_table("bottom")) model.bottom = read_bottom(*bottom, context);
    if (const auto uncertainty = top.optional_table("uncertainty"))
        model.uncertainty = read_uncertainty_section(*uncertainty, *model.index);
    context.check_vertical_convention();
    model.warnings = std::move(context.warnings);
    return model;
}

}  // namespace

FirnModel parse_model(const std::string& toml_text, const std::string& origin) {
    return read_model(TomlDocument::parse(toml_text, origin));
}

FirnModel load_model_file(const std::string& path) { return read_model(TomlDocument::read(path, "model file")); }

std::string_view default_model_toml() { return built_in_model_text; }

FirnModel default_model() {
    FirnModel model = parse_model(std::string(built_in_model_text), "built-in");
    model.origin = "built-in";
    return model;
}

std::string model_to_toml(const FirnModel& model, const std::string& comment) {
    TomlWriter out;
    out.comment(comment);
    out.value("name", model.name);
    out.table("index");
    write_index_profile(*model.index, out);
    out.table("air").value("n", model.n_air);
    if (model.attenuation) {
        out.table("attenuation");
        write_attenuation_profile(*model.attenuation, out);
    }
    if (model.bottom) {
        out.table("bottom");
        out.value("depth_m", -model.bottom->z_m).value("power_reflectivity", model.bottom->power_reflectivity);
    }
    if (model.uncertainty) write_uncertainty_section(*model.uncertainty, out);
    return out.text();
}

}  // namespace firnray

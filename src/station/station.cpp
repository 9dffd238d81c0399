#include "station/station.hpp"

#include <cmath>
#include <limits>
#include <optional>
#include <set>

#include <fmt/format.h>

#include "core/errors.hpp"
#include "io/toml_reader.hpp"

namespace firnray {

namespace {

constexpr double infinity = std::numeric_limits<double>::infinity();

// Generous bounds that keep every later computation finite: a station spans at most 100 km, its
// receivers lie at most 10 km deep (the thickest ice on Earth is under 5 km) or 10 km up.
constexpr NumberRange horizontal{-100000.0, 100000.0, "m", "a horizontal position",
                                 "a station spans at most 100 km around its origin"};
constexpr NumberRange height{-10000.0, 10000.0, "m", "z",
                             "the thickest ice on Earth is under 5 km; a receiver in the air stays within 10 km"};
constexpr NumberRange depth{-infinity, 10000.0, "m", "a depth", "the thickest ice on Earth is under 5 km"};


std::string name_of(const TomlTable& t) {
    const std::string name = t.text("name", "a name (every receiver and string needs one)");
    if (name.empty()) t.fail("name", "must not be empty");
    return name;
}

// z from z_m or depth_m (exactly one of them).
double vertical(const TomlTable& t) {
    const std::string_view key = t.one_of("z_m", "depth_m", "z_m (negative in the ice) or depth_m (positive)");
    if (key == "z_m") return t.number("z_m", "z_m", height);
    const double value = t.number("depth_m", "depth_m", depth);
    if (value < 0.0)
        t.fail("depth_m", fmt::format("depth_m = {} is negative; depth is positive downward (use z_m for heights)", value));
    return -value;
}

Receiver read_receiver(const TomlTable& t, const std::string& string_name, double string_x, double string_y) {
    const bool standalone = string_name.empty();
    // Local statics: safe even when a station is read by another file's static initialiser.
    static const std::vector<std::string> standalone_keys{"name", "x_m", "y_m", "z_m", "depth_m", "in_air"};
    static const std::vector<std::string> string_receiver_keys{"name", "z_m", "depth_m", "in_air"};
    t.allow_only(standalone ? standalone_keys : string_receiver_keys,
                 standalone ? "in a [[receiver]] table" : "in a [[string.receiver]] table (x_m and y_m are the string's)",
                 {"x_m", "y_m"});
    Receiver r;
    r.source_line = t.line();
    r.name = name_of(t);
    r.string_name = string_name;
    if (standalone) {
        r.x_m = t.number("x_m", fmt::format("x_m for receiver '{}'", r.name), horizontal);
        r.y_m = t.number("y_m", fmt::format("y_m for receiver '{}'", r.name), horizontal);
    } else {
        r.x_m = string_x;
        r.y_m = string_y;
    }
    r.z_m = vertical(t);
    r.in_air = t.optional_flag("in_air").value_or(false);
    const std::string_view vertical_key = t.has("depth_m") ? "depth_m" : "z_m";
    // Both are located at the receiver's table, where its position is given as a whole.
    if (r.z_m > 0.0 && !r.in_air)
        throw ModelInputError(fmt::format("receiver '{}' is {} m above the surface; receivers belong in the ice "
                                         "(z_m <= 0), or say in_air = true",
                                          r.name, r.z_m),
                              {t.origin(), t.line(), t.key_path(vertical_key)});
    if (r.z_m <= 0.0 && r.in_air)
        throw ModelInputError(
            fmt::format("receiver '{}' says in_air = true but lies at z = {} m, in the ice", r.name, r.z_m),
            {t.origin(), t.line(), t.key_path("in_air")});
    return r;
}

}  // namespace

namespace {

Station read_station(const TomlDocument& document) {
    const TomlTable root = document.root();
    root.allow_only({"name", "string", "receiver"}, "at the top level of a station file");
    Station station;
    station.origin = document.origin();
    station.name = root.optional_text("name").value_or(document.origin());

    std::set<std::string> receiver_names;
    auto add = [&](const TomlTable& table, Receiver receiver) {
        if (!receiver_names.insert(receiver.name).second)
            table.fail("name", fmt::format("duplicate receiver name '{}' (names must be unique in a station)",
                                           receiver.name));
        station.receivers.push_back(std::move(receiver));
    };
    std::set<std::string> string_names;
    for (const TomlTable& s : root.tables("string", "an array of tables ([[string]])")) {
        s.allow_only({"name", "x_m", "y_m", "receiver"}, "in a [[string]] table");
        const std::string name = name_of(s);
        if (!string_names.insert(name).second) s.fail("name", fmt::format("duplicate string name '{}'", name));
        const double x = s.number("x_m", fmt::format("x_m for string '{}'", name), horizontal);
        const double y = s.number("y_m", fmt::format("y_m for string '{}'", name), horizontal);
        const auto receivers = s.tables("receiver", "an array of tables ([[string.receiver]])");
        if (receivers.empty())
            s.fail("receiver", fmt::format("string '{}' has no receivers ([[string.receiver]])", name));
        for (const TomlTable& r : receivers) add(r, read_receiver(r, name, x, y));
    }
    for (const TomlTable& r : root.tables("receiver", "an array of tables ([[receiver]])"))
        add(r, read_receiver(r, "", 0.0, 0.0));
    if (station.receivers.empty())
        throw ModelInputError("the station has no receivers: add [[receiver]] or [[string]] with [[string.receiver]]",
                              {document.origin(), 1, ""});
    return station;
}

}  // namespace

Station parse_station(const std::string& toml_text, const std::string& origin) {
    return read_station(TomlDocument::parse(toml_text, origin));
}

Station load_station_file(const std::string& path) { return read_station(TomlDocument::read(path, "station file")); }

std::size_t Station::index_of(const std::string& wanted) const {
    for (std::size_t i = 0; i < receivers.size(); ++i)
        if (receivers[i].name == wanted) return i;
    std::string known;
    for (const auto& r : receivers) known += (known.empty() ? "" : ", ") + r.name;
    throw DataInputError(fmt::format("no receiver named '{}' in station '{}' (it has: {})", wanted, name, known));
}

const Receiver& Station::receiver(const std::string& wanted) const { return receivers[index_of(wanted)]; }

}  // namespace firnray

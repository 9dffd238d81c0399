#include "station/station.hpp"

#include <cmath>
#include <fstream>
#include <set>
#include <sstream>

#include <fmt/format.h>
#include <toml++/toml.h>

#include "core/errors.hpp"

namespace firnray {

namespace {

int line_of(const toml::node& node) { return static_cast<int>(node.source().begin.line); }

struct Reader {
    std::string origin;

    [[noreturn]] void fail(const std::string& what, int line, const std::string& key) const {
        throw ModelInputError(what, {origin, line, key});
    }

    void allow_only(const toml::table& table, const std::string& prefix, std::initializer_list<const char*> keys) const {
        for (const auto& [k, node] : table) {
            bool known = false;
            for (const char* allowed : keys) known = known || k.str() == allowed;
            if (!known) {
                std::string list;
                for (const char* allowed : keys) list += (list.empty() ? "" : ", ") + std::string(allowed);
                fail(fmt::format("unknown key (allowed here: {})", list), line_of(node), prefix + std::string(k.str()));
            }
        }
    }

    std::optional<double> number(const toml::table& table, const std::string& prefix, const char* key) const {
        const toml::node* node = table.get(key);
        if (node == nullptr) return std::nullopt;
        std::optional<double> value;
        if (const auto* f = node->as_floating_point()) value = f->get();
        else if (const auto* i = node->as_integer()) value = static_cast<double>(i->get());
        else fail("must be a number (metres)", line_of(*node), prefix + key);
        if (!std::isfinite(*value)) fail("must be a finite number", line_of(*node), prefix + key);
        return value;
    }

    std::string text(const toml::table& table, const std::string& prefix, const char* key, int line_if_missing) const {
        const toml::node* node = table.get(key);
        if (node == nullptr) fail("missing (every receiver and string needs a name)", line_if_missing, prefix + key);
        const auto* s = node->as_string();
        if (s == nullptr) fail("must be a string", line_of(*node), prefix + key);
        if (s->get().empty()) fail("must not be empty", line_of(*node), prefix + key);
        return s->get();
    }

    bool flag(const toml::table& table, const std::string& prefix, const char* key) const {
        const toml::node* node = table.get(key);
        if (node == nullptr) return false;
        const auto* b = node->as_boolean();
        if (b == nullptr) fail("must be true or false", line_of(*node), prefix + key);
        return b->get();
    }

    // z from z_m or depth_m (exactly one of them).
    double vertical(const toml::table& table, const std::string& prefix, int line) const {
        const auto z = number(table, prefix, "z_m");
        const auto depth = number(table, prefix, "depth_m");
        if (z && depth) fail("give z_m or depth_m, not both", line, prefix + "depth_m");
        if (!z && !depth) fail("missing: give z_m (negative in the ice) or depth_m (positive)", line, prefix + "z_m");
        if (depth && *depth < 0.0)
            fail(fmt::format("depth_m = {} is negative; depth is positive downward (use z_m for heights)", *depth),
                 line_of(*table.get("depth_m")), prefix + "depth_m");
        return z ? *z : -*depth;
    }

    Receiver receiver(const toml::table& table, const std::string& prefix, const std::string& string_name,
                      std::optional<double> string_x, std::optional<double> string_y) const {
        const int line = line_of(table);
        allow_only(table, prefix,
                   string_name.empty() ? std::initializer_list<const char*>{"name", "x_m", "y_m", "z_m", "depth_m", "in_air"}
                                       : std::initializer_list<const char*>{"name", "z_m", "depth_m", "in_air"});
        Receiver r;
        r.source_line = line;
        r.name = text(table, prefix, "name", line);
        r.string_name = string_name;
        if (string_name.empty()) {
            const auto x = number(table, prefix, "x_m");
            const auto y = number(table, prefix, "y_m");
            if (!x) fail(fmt::format("receiver '{}' has no x_m", r.name), line, prefix + "x_m");
            if (!y) fail(fmt::format("receiver '{}' has no y_m", r.name), line, prefix + "y_m");
            r.x_m = *x;
            r.y_m = *y;
        } else {
            r.x_m = *string_x;
            r.y_m = *string_y;
        }
        r.z_m = vertical(table, prefix, line);
        r.in_air = flag(table, prefix, "in_air");
        if (r.z_m > 0.0 && !r.in_air)
            fail(fmt::format("receiver '{}' is {} m above the surface; receivers belong in the ice (z_m <= 0), "
                             "or say in_air = true", r.name, r.z_m),
                 line, prefix + (table.get("depth_m") ? "depth_m" : "z_m"));
        if (r.z_m <= 0.0 && r.in_air)
            fail(fmt::format("receiver '{}' says in_air = true but lies at z = {} m, in the ice", r.name, r.z_m), line,
                 prefix + "in_air");
        return r;
    }
};

}  // namespace

Station parse_station(const std::string& toml_text, const std::string& origin) {
    Reader reader{origin};
    toml::table root;
    try {
        root = toml::parse(toml_text, origin);
    } catch (const toml::parse_error& e) {
        throw ModelInputError(std::string("not valid TOML: ") + std::string(e.description()),
                              {origin, static_cast<int>(e.source().begin.line), ""});
    }
    reader.allow_only(root, "", {"name", "string", "receiver"});
    Station station;
    station.origin = origin;
    if (const auto* name = root.get("name")) {
        if (!name->is_string()) reader.fail("must be a string", line_of(*name), "name");
        station.name = name->as_string()->get();
    } else {
        station.name = origin;
    }

    auto array_of_tables = [&](const char* key) -> const toml::array* {
        const toml::node* node = root.get(key);
        if (node == nullptr) return nullptr;
        const auto* arr = node->as_array();
        if (arr == nullptr || !arr->is_array_of_tables())
            reader.fail(fmt::format("must be an array of tables ([[{}]])", key), line_of(*node), key);
        return arr;
    };

    std::set<std::string> string_names;
    if (const auto* strings = array_of_tables("string")) {
        for (std::size_t i = 0; i < strings->size(); ++i) {
            const auto& table = *strings->get(i)->as_table();
            const std::string prefix = fmt::format("string[{}].", i);
            reader.allow_only(table, prefix, {"name", "x_m", "y_m", "receiver"});
            const std::string name = reader.text(table, prefix, "name", line_of(table));
            if (!string_names.insert(name).second)
                reader.fail(fmt::format("duplicate string name '{}'", name), line_of(table), prefix + "name");
            const auto x = reader.number(table, prefix, "x_m");
            const auto y = reader.number(table, prefix, "y_m");
            if (!x) reader.fail(fmt::format("string '{}' has no x_m", name), line_of(table), prefix + "x_m");
            if (!y) reader.fail(fmt::format("string '{}' has no y_m", name), line_of(table), prefix + "y_m");
            const toml::node* list = table.get("receiver");
            if (list == nullptr || !list->is_array_of_tables() || list->as_array()->empty())
                reader.fail(fmt::format("string '{}' has no receivers ([[string.receiver]])", name), line_of(table),
                            prefix + "receiver");
            const auto& receivers = *list->as_array();
            for (std::size_t j = 0; j < receivers.size(); ++j)
                station.receivers.push_back(reader.receiver(*receivers.get(j)->as_table(),
                                                            fmt::format("{}receiver[{}].", prefix, j), name, x, y));
        }
    }
    if (const auto* receivers = array_of_tables("receiver")) {
        for (std::size_t i = 0; i < receivers->size(); ++i)
            station.receivers.push_back(
                reader.receiver(*receivers->get(i)->as_table(), fmt::format("receiver[{}].", i), "", {}, {}));
    }
    if (station.receivers.empty())
        reader.fail("the station has no receivers: add [[receiver]] or [[string]] with [[string.receiver]]", 1, "");

    std::set<std::string> names;
    for (const auto& r : station.receivers)
        if (!names.insert(r.name).second)
            throw ModelInputError(fmt::format("duplicate receiver name '{}' (names must be unique in a station)", r.name),
                                  {origin, r.source_line, "name"});
    return station;
}

Station load_station_file(const std::string& path) {
    std::ifstream in(path);
    if (!in) throw ModelInputError("cannot open the station file (is the path right?)", {path, 0, ""});
    std::stringstream text;
    text << in.rdbuf();
    return parse_station(text.str(), path);
}

std::size_t Station::index_of(const std::string& wanted) const {
    for (std::size_t i = 0; i < receivers.size(); ++i)
        if (receivers[i].name == wanted) return i;
    std::string known;
    for (const auto& r : receivers) known += (known.empty() ? "" : ", ") + r.name;
    throw DataInputError(fmt::format("no receiver named '{}' in station '{}' (it has: {})", wanted, name, known));
}

const Receiver& Station::receiver(const std::string& wanted) const { return receivers[index_of(wanted)]; }

}  // namespace firnray

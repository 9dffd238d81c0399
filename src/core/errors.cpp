#include "core/errors.hpp"

namespace firnray {

std::string InputLocation::describe() const {
    std::string out = file;
    if (line > 0) out += (out.empty() ? "line " : ":") + std::to_string(line);
    if (line > 0 && column > 0) out += (file.empty() ? ", column " : ":") + std::to_string(column);
    if (!key.empty()) out += (out.empty() ? "" : ": ") + std::string("key '") + key + "'";
    return out;
}

static std::string compose(const std::string& what, const InputLocation& where) {
    const std::string place = where.describe();
    return place.empty() ? what : place + ": " + what;
}

InputError::InputError(const std::string& what, InputLocation where)
    : Error(compose(what, where)), where_(std::move(where)), reason_(what) {}

}  // namespace firnray

#include "io/csv_writer.hpp"

#include <cmath>

#include "core/errors.hpp"

namespace firnray {

std::string csv_field(std::string_view text) {
    std::string out;
    out.reserve(text.size() + 2);
    append_csv_field(out, text);
    return out;
}

double require_finite(double value, std::string_view field) {
    if (std::isfinite(value)) return value;
    const char* what = std::isnan(value) ? "NaN" : value > 0 ? "+infinite" : "-infinite";
    throw NumericalError("the output field '" + std::string(field) + "' is " + what +
                         ": a numerical failure, not a value to write");
}

}  // namespace firnray

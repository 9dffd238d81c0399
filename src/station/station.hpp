// A station: named receivers at fixed positions in the ice, optionally grouped in strings
// (boreholes). Loaded from a TOML station file (schema in docs/station-files.md).
#pragma once

#include <string>
#include <vector>

namespace firnray {

struct Receiver {
    std::string name;
    std::string string_name;  // the borehole it hangs in; empty when standalone
    double x_m = 0.0, y_m = 0.0, z_m = 0.0;
    bool in_air = false;      // declared above the surface on purpose
    int source_line = 0;      // line in the station file, for messages
};

struct Station {
    std::string name;
    std::string origin;  // file path
    std::vector<Receiver> receivers;

    // The receiver with this name; throws DataInputError naming the known ones if absent.
    const Receiver& receiver(const std::string& name) const;
    std::size_t index_of(const std::string& name) const;
};

Station load_station_file(const std::string& path);
Station parse_station(const std::string& toml_text, const std::string& origin);

}  // namespace firnray

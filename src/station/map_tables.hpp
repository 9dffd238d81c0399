// The arrival tables of a map, one per receiver depth, from whichever engine is exact for the
// model (docs/physics.md §8.6): the fast table (ArrivalTable) for a profile growing with depth,
// no bottom wanted and every depth above deep_table_limit_m; the stratified table
// (StratifiedArrivalTable) otherwise. Shadow and depth maps and the beams' coverage map share it,
// so that every map sees the same paths.
#pragma once

#include <cstddef>
#include <map>
#include <memory>
#include <span>
#include <string>
#include <utility>
#include <vector>

#include "core/cancel.hpp"
#include "solver/ray_solver.hpp"
#include "station/arrival_table.hpp"

namespace firnray {

class StratifiedProfile;

// Below this depth (m) ArrivalTable's single integration down from the surface loses the rays
// that are nearly horizontal near n_deep; the stratified table resolves them (RayLevel).
inline constexpr double deep_table_limit_m = 1000.0;

struct MapTableOptions {
    int ray_parameters = 1500;  // samples of ξ per table
    // The most ends (turning points, surface and bottom reflections, each counting one) a path
    // may meet: connect's --max-bounces. Only profiles with ducts or a bottom have paths with more
    // than one end.
    int max_bounces = 4;
    bool bottom_paths = true;  // include paths reflected at the model's bottom
    // automatic: the fast table where it is exact, the stratified table otherwise.
    enum class Engine { automatic, monotone, stratified } engine = Engine::automatic;
    int threads = 1;
    RunControl control;
};

// One receiver depth's arrivals at the map's source depths (rows), whichever engine made them.
class ReceiverDepthTable {
public:
    virtual ~ReceiverDepthTable() = default;
    virtual void arrivals(std::size_t row, double distance_m, std::vector<MapArrival>& out) const = 0;
    virtual double max_reach_m(std::size_t row) const = 0;
    // Sorted disjoint closed intervals of the distances at which the row's source is seen (with
    // ducts or a bottom they need not be one interval; the last may end at +inf).
    virtual std::vector<std::pair<double, double>> visible_distances(std::size_t row) const = 0;
};

// The tables of one map: one per distinct receiver depth (receivers in a ring share one).
class MapTables {
public:
    // receiver_z: every receiver's z (in the ice); source_z: the rows. Throws DataInputError for
    // max_bounces outside 0..64.
    MapTables(const RaySolver& solver, std::span<const double> receiver_z, std::vector<double> source_z,
              const MapTableOptions& options);
    ~MapTables();
    MapTables(const MapTables&) = delete;
    MapTables& operator=(const MapTables&) = delete;

    const ReceiverDepthTable& at(double receiver_z) const { return *tables_.at(receiver_z); }
    bool stratified() const { return stratified_; }
    // What the tables leave out on purpose, one plain sentence each (empty: every path).
    const std::vector<std::string>& left_out() const { return left_out_; }

private:
    std::unique_ptr<StratifiedProfile> profile_;
    bool stratified_ = false;
    std::vector<std::string> left_out_;
    std::map<double, std::unique_ptr<ReceiverDepthTable>> tables_;
};

// Whether the automatic engine uses the stratified table for this model: n falls with depth
// somewhere, a bottom whose paths are wanted, or a depth (receiver or source, m, positive) below
// deep_table_limit_m.
bool needs_stratified_table(const FirnModel& model, double deepest_m, bool bottom_paths);

// The memory (bytes) of the stratified table one receiver's map holds for `depth_rows` source
// depths (StratifiedArrivalTable::memory_estimate_bytes), or 0 when needs_stratified_table says
// the map uses the fast table. For the memory checks of the map commands.
double stratified_map_memory_bytes(const FirnModel& model, double deepest_m, bool bottom_paths, std::size_t depth_rows,
                                   int ray_parameters, int max_bounces);

}  // namespace firnray

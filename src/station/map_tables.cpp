#include "station/map_tables.hpp"

#include <algorithm>
#include <optional>

#include <fmt/format.h>

#include "core/errors.hpp"
#include "solver/stratified_intervals.hpp"
#include "station/stratified_arrival_table.hpp"

namespace firnray {

namespace {

double analysis_depth_for(double deepest_m) {
    return std::max(StratifiedProfile::default_analysis_depth_m, deepest_m + 100.0);
}

std::optional<double> bottom_of(const FirnModel& model) {
    if (model.bottom) return model.bottom->z_m;
    return std::nullopt;
}

bool has_inversions(const StratifiedProfile& profile) {
    return !profile.local_minima_z().empty() || !profile.inversions().empty();
}

class MonotoneRowTable final : public ReceiverDepthTable {
public:
    MonotoneRowTable(const RaySolver& solver, double receiver_z, std::vector<double> source_z,
                     const ArrivalTableOptions& options)
        : table_(solver, receiver_z, std::move(source_z), options) {}
    void arrivals(std::size_t row, double distance_m, std::vector<MapArrival>& out) const override {
        table_.arrivals(row, distance_m, out);
    }
    double max_reach_m(std::size_t row) const override { return table_.max_reach_m(row); }
    // On a profile growing with depth the direct family starts at distance 0 (ξ = 0) and the
    // families reach every distance up to the largest.
    std::vector<std::pair<double, double>> visible_distances(std::size_t row) const override {
        return {{0.0, table_.max_reach_m(row)}};
    }

private:
    ArrivalTable table_;
};

class StratifiedRowTable final : public ReceiverDepthTable {
public:
    StratifiedRowTable(const FirnModel& model, const StratifiedProfile& profile, double receiver_z,
                       std::vector<double> source_z, const StratifiedTableOptions& options)
        : table_(model, profile, receiver_z, std::move(source_z), options) {}
    void arrivals(std::size_t row, double distance_m, std::vector<MapArrival>& out) const override {
        table_.arrivals(row, distance_m, out);
    }
    double max_reach_m(std::size_t row) const override { return table_.max_reach_m(row); }
    std::vector<std::pair<double, double>> visible_distances(std::size_t row) const override {
        return table_.visible_distances(row);
    }

private:
    StratifiedArrivalTable table_;
};

}  // namespace

bool needs_stratified_table(const FirnModel& model, double deepest_m, bool bottom_paths) {
    if ((model.bottom && bottom_paths) || deepest_m > deep_table_limit_m) return true;
    return has_inversions(StratifiedProfile(model.index, bottom_of(model), analysis_depth_for(deepest_m)));
}

double stratified_map_memory_bytes(const FirnModel& model, double deepest_m, bool bottom_paths, std::size_t depth_rows,
                                   int ray_parameters, int max_bounces) {
    if (!needs_stratified_table(model, deepest_m, bottom_paths)) return 0.0;
    const StratifiedProfile profile(model.index, bottom_of(model), analysis_depth_for(deepest_m));
    StratifiedTableOptions options;
    options.ray_parameters = ray_parameters;
    options.max_bounces = max_bounces;
    return StratifiedArrivalTable::memory_estimate_bytes(profile, depth_rows, options);
}

MapTables::~MapTables() = default;

MapTables::MapTables(const RaySolver& solver, std::span<const double> receiver_z, std::vector<double> source_z,
                     const MapTableOptions& options) {
    if (options.max_bounces < 0 || options.max_bounces > 64)
        throw DataInputError(fmt::format("max-bounces must be between 0 and 64 (got {})", options.max_bounces),
                             {"", 0, "max-bounces"});
    const FirnModel& model = solver.model();
    double deepest = 0.0;
    for (const double z : receiver_z) deepest = std::max(deepest, -z);
    for (const double z : source_z) deepest = std::max(deepest, -z);
    profile_ = std::make_unique<StratifiedProfile>(model.index, bottom_of(model), analysis_depth_for(deepest));
    const bool inversions = has_inversions(*profile_);
    const bool bottom_wanted = model.bottom && options.bottom_paths;
    stratified_ = options.engine == MapTableOptions::Engine::stratified;
    if (options.engine == MapTableOptions::Engine::automatic)
        stratified_ = inversions || bottom_wanted || deepest > deep_table_limit_m;
    if (model.bottom && !options.bottom_paths) left_out_.push_back("paths reflected at the bottom (left out by option)");
    if (stratified_ && (!profile_->ducts().empty() || bottom_wanted))
        left_out_.push_back(fmt::format("paths with more than {} turns and reflections (--max-bounces {})",
                                        options.max_bounces, options.max_bounces));
    if (!stratified_ && inversions)
        left_out_.push_back("paths through the index inversions (the table for profiles growing with depth was used)");

    ArrivalTableOptions table_options;
    table_options.ray_parameters = options.ray_parameters;
    table_options.threads = options.threads;
    table_options.control.cancel = options.control.cancel;
    StratifiedTableOptions stratified_options;
    stratified_options.ray_parameters = options.ray_parameters;
    stratified_options.max_bounces = options.max_bounces;
    stratified_options.bottom_paths = options.bottom_paths;
    stratified_options.threads = options.threads;
    stratified_options.control.cancel = options.control.cancel;
    for (const double z : receiver_z) {
        if (tables_.count(z)) continue;
        if (stratified_)
            tables_[z] = std::make_unique<StratifiedRowTable>(model, *profile_, z, source_z, stratified_options);
        else
            tables_[z] = std::make_unique<MonotoneRowTable>(solver, z, source_z, table_options);
    }
}

}  // namespace firnray

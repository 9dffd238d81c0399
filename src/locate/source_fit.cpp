#include "locate/source_fit.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <span>

#include <Eigen/Dense>
#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "core/parallel.hpp"
#include "core/text.hpp"
#include "solver/stratified_intervals.hpp"
#include "station/delay_table.hpp"

namespace firnray {

namespace {

constexpr double infinite_chi2 = std::numeric_limits<double>::infinity();
// Paths kept per receiver and search position: with one bounce a receiver sees at most a direct
// or refracted path, a reflected one and a bottom reflection.
constexpr int search_paths_per_receiver = 4;
// Levenberg–Marquardt stops when a step would lower χ² by less than this.
constexpr double converged_chi2_decrease = 1e-9;
// Rounds of matching and emission time per position of the coarse search: enough to find the
// basin, which the refinement then settles with the full alternation.
constexpr int coarse_rounds = 2;
// The first stage of the coarse search looks at every coarse_stride-th azimuth, distance and
// level of the search grid: an eighth of its positions (docs/locate.md).
constexpr int coarse_stride = 2;
// Paths of one channel whose match costs assign_pulses keeps on the stack (more go to the heap).
constexpr int stack_paths = 8;
// What a pulse that no predicted path explains adds to χ²: a 5σ miss (docs/locate.md).
constexpr double unmatched_pulse_chi2 = 25.0;

// A fit whose χ² is this far above its ndof did not find the basin of the source (or the pulses
// do not match the model): further candidates of the coarse search are tried.
// A candidate of the coarse search whose χ² is within this factor of the best one's is refined
// even when the best fit is good: it may be another minimum to report.
constexpr double rival_chi2_factor = 2.0;
// How far above the reporting margin a fit on the travel-time table may be and still be finished
// exactly: the table moves χ² by far less than this (its times agree with find_paths to 0.01 ns).
constexpr double polish_chi2_slack = 1.0;

bool acceptable_fit(double chi2, int ndof) {
    return chi2 <= ndof + 5.0 * std::sqrt(2.0 * std::max(ndof, 1)) + 10.0;
}

// The pulses of one event grouped by channel, each group in time order: the order in which a
// channel's pulses are matched to its paths (a later pulse never takes an earlier path).
struct PreparedEvent {
    std::vector<std::size_t> channels;              // distinct channels, in first-seen order
    std::vector<std::array<int, 2>> pulses_of;      // per channel: pulse indices (second −1 if none)
    std::vector<double> time_ns, weight;            // per pulse: time and 1/σ² (ns⁻²)
};

PreparedEvent prepare(const ArrivalEvent& event) {
    PreparedEvent p;
    for (std::size_t i = 0; i < event.pulses.size(); ++i) {
        const MeasuredPulse& pulse = event.pulses[i];
        p.time_ns.push_back(pulse.time_s * 1e9);
        p.weight.push_back(1.0 / (pulse.sigma_s * 1e9 * pulse.sigma_s * 1e9));
        const auto it = std::find(p.channels.begin(), p.channels.end(), pulse.channel);
        if (it == p.channels.end()) {
            p.channels.push_back(pulse.channel);
            p.pulses_of.push_back({static_cast<int>(i), -1});
        } else {
            auto& group = p.pulses_of[static_cast<std::size_t>(it - p.channels.begin())];
            group[1] = static_cast<int>(i);
            if (p.time_ns[static_cast<std::size_t>(group[1])] < p.time_ns[static_cast<std::size_t>(group[0])])
                std::swap(group[0], group[1]);
        }
    }
    return p;
}

// The assignment of pulses to predicted paths that minimises χ², with the emission time t0 at
// its optimum (a weighted mean, since the times are linear in t0). Channels are matched
// independently given t0, and t0 is updated until the assignment no longer changes. A pulse may
// stay unmatched (path −1) at the price of unmatched_pulse_chi2: a position where a channel has
// fewer paths than pulses (just beyond a fold of its paths, in its shadow) is then a poor fit
// rather than a wall that the search cannot cross.
struct Assignment {
    bool valid = false;  // at least one pulse matched
    double chi2 = infinite_chi2;
    double t0_ns = 0.0;
    std::vector<int> path_of_pulse;
    int unmatched = 0;
};

// times_of(g) gives the predicted travel times (ns, ascending) at the event's g-th channel.
// rounds bounds the alternation of t0 and matching (the coarse search affords only a few).
template <class TimesOf>
void assign_pulses(const PreparedEvent& event, TimesOf&& times_of, Assignment& a, int rounds = 8) {
    const std::size_t pulses = event.time_ns.size();
    std::vector<double> heap_cost;
    a.path_of_pulse.assign(pulses, -1);
    a.valid = false;
    a.chi2 = infinite_chi2;
    // Start: a channel's pulses take its first paths in order.
    for (std::size_t g = 0; g < event.channels.size(); ++g) {
        const auto& times = times_of(g);
        const auto& group = event.pulses_of[g];
        for (std::size_t k = 0; k < 2; ++k)
            if (group[k] >= 0 && k < times.size()) a.path_of_pulse[static_cast<std::size_t>(group[k])] = static_cast<int>(k);
    }
    const auto emission_time = [&](double& t0) {
        double sum = 0.0, weights = 0.0;
        for (std::size_t g = 0; g < event.channels.size(); ++g) {
            const auto& times = times_of(g);
            for (int i : event.pulses_of[g]) {
                if (i < 0) continue;
                const auto k = static_cast<std::size_t>(i);
                if (a.path_of_pulse[k] < 0) continue;
                sum += event.weight[k] * (event.time_ns[k] - times[static_cast<std::size_t>(a.path_of_pulse[k])]);
                weights += event.weight[k];
            }
        }
        if (weights <= 0.0) return false;
        t0 = sum / weights;
        return true;
    };
    if (!emission_time(a.t0_ns)) return;
    for (int round = 0; round < rounds; ++round) {
        bool changed = false;
        for (std::size_t g = 0; g < event.channels.size(); ++g) {
            const auto& times = times_of(g);
            const int paths = static_cast<int>(times.size());
            const auto& group = event.pulses_of[g];
            // cost[k * (paths + 1) + path + 1]: χ² of the channel's k-th pulse on that path (slot 0:
            // unmatched), computed once per round rather than once per match tried; on the stack
            // unless a channel has many paths (ducts).
            const int count = group[1] < 0 ? 1 : 2;
            const auto width = static_cast<std::size_t>(paths + 1);
            std::array<double, 2 * (stack_paths + 1)> stack_cost;
            if (paths > stack_paths) heap_cost.resize(2 * width);
            double* cost = paths > stack_paths ? heap_cost.data() : stack_cost.data();
            for (int k = 0; k < count; ++k) {
                const auto pulse = static_cast<std::size_t>(group[static_cast<std::size_t>(k)]);
                double* row = cost + static_cast<std::size_t>(k) * width;
                row[0] = unmatched_pulse_chi2;
                for (int path = 0; path < paths; ++path) {
                    const double r = event.time_ns[pulse] - a.t0_ns - times[static_cast<std::size_t>(path)];
                    row[path + 1] = event.weight[pulse] * r * r;
                }
            }
            // Every order-keeping match: path −1 is "unmatched"; a later pulse takes a later path.
            // A pulse stays unmatched only when its channel has fewer paths than pulses, so the
            // matches are: one pulse, any path; two pulses, any two paths in order, or with a
            // single path, either pulse on it. Ties keep the first match in this order.
            int best_first = -1, best_second = -1;
            double best_cost = infinite_chi2;
            const double* second_row = cost + width;
            if (count == 1) {
                if (paths == 0) best_cost = cost[0];
                for (int i = 0; i < paths; ++i)
                    if (cost[i + 1] < best_cost) best_cost = cost[i + 1], best_first = i;
            } else if (paths >= 2) {
                for (int i = 0; i < paths; ++i)
                    for (int j = i + 1; j < paths; ++j) {
                        const double c = cost[i + 1] + second_row[j + 1];
                        if (c < best_cost) best_cost = c, best_first = i, best_second = j;
                    }
            } else if (paths == 1) {
                best_cost = cost[0] + second_row[1], best_second = 0;
                if (cost[1] + second_row[0] < best_cost) best_cost = cost[1] + second_row[0], best_first = 0, best_second = -1;
            }
            const auto first = static_cast<std::size_t>(group[0]);
            changed |= a.path_of_pulse[first] != best_first;
            a.path_of_pulse[first] = best_first;
            if (group[1] >= 0) {
                const auto second = static_cast<std::size_t>(group[1]);
                changed |= a.path_of_pulse[second] != best_second;
                a.path_of_pulse[second] = best_second;
            }
        }
        if (!emission_time(a.t0_ns)) return;
        if (!changed) break;
    }
    a.chi2 = 0.0;
    a.unmatched = 0;
    for (std::size_t g = 0; g < event.channels.size(); ++g) {
        const auto& times = times_of(g);
        for (int i : event.pulses_of[g]) {
            if (i < 0) continue;
            const auto k = static_cast<std::size_t>(i);
            if (a.path_of_pulse[k] < 0) {
                a.chi2 += unmatched_pulse_chi2;
                ++a.unmatched;
                continue;
            }
            const double r = event.time_ns[k] - a.t0_ns - times[static_cast<std::size_t>(a.path_of_pulse[k])];
            a.chi2 += event.weight[k] * r * r;
        }
    }
    a.valid = std::isfinite(a.chi2);
}

// The model's answer at one trial position for the event's channels.
struct Evaluation {
    Point position;
    Assignment assignment;
    // Per event channel, per path in time order: its time, ∂T/∂source and kind.
    std::vector<std::vector<double>> times_ns;
    std::vector<std::vector<ReceiverArrivals::Gradient>> gradients;
    std::vector<std::vector<PathKind>> kinds;
};

// What a trial position costs: the event's channels, and the table that answers for them where
// it can (null: find_paths everywhere).
struct Predictor {
    const RaySolver& solver;
    const TravelTimeTable* table;
    const std::vector<std::size_t>& channels;       // station indices of the event's channels
    const std::vector<Receiver>& event_receivers;   // the same receivers
    const PathOptions& paths;
};

using Matrix4 = Eigen::Matrix4d;
using Vector4 = Eigen::Vector4d;

}  // namespace

void LocateSearchGrid::validate() const {
    const auto fail = [](const std::string& field, const std::string& why) {
        throw DataInputError(fmt::format("search grid: {}", why), {"", 0, field});
    };
    if (!(std::isfinite(min_distance_m) && min_distance_m > 0.0)) fail("min_distance_m", "must be above 0 m");
    if (!(std::isfinite(max_distance_m) && max_distance_m > min_distance_m)) fail("max_distance_m", "must exceed min_distance_m");
    if (distance_steps < 2 || distance_steps > 1000) fail("distance_steps", "must be 2..1000");
    if (azimuth_steps < 3 || azimuth_steps > 3600) fail("azimuth_steps", "must be 3..3600");
    if (depths_m.empty()) fail("depths_m", "needs at least one depth");
    for (double d : depths_m)
        if (!(std::isfinite(d) && d > 0.0)) fail("depths_m", fmt::format("{} is not a depth above 0 m", number_for_message(d)));
    for (double h : heights_m)
        if (!(std::isfinite(h) && h > 0.0)) fail("heights_m", fmt::format("{} is not a height above 0 m", number_for_message(h)));
}

// Predicted travel times of every receiver at every search position, indexed by
// (azimuth, distance, level); levels run from the highest to the lowest z.
struct SourceLocator::SearchTable {
    int azimuths = 0, distances = 0, levels = 0;
    std::vector<Point> positions;
    std::vector<double> times_ns;            // [position][receiver][path], NaN beyond the paths found
    std::vector<unsigned char> path_counts;  // [position][receiver]

    std::size_t index(int azimuth, int distance, int level) const {
        return (static_cast<std::size_t>(azimuth) * distances + static_cast<std::size_t>(distance)) * levels +
               static_cast<std::size_t>(level);
    }
};

SourceLocator::SourceLocator(const RaySolver& solver, const Station& station, LocateOptions options)
    : solver_(solver), station_(station), options_(std::move(options)) {
    options_.search.validate();
    if (options_.candidates < 1) throw DataInputError("at least one search candidate is needed", {"", 0, "candidates"});
    if (!(options_.alternative_chi2_margin >= 0.0))
        throw DataInputError("the χ² margin of alternatives must be >= 0", {"", 0, "alternative_chi2_margin"});
    centre_ = station_centre(station_.receivers);

    const LocateSearchGrid& grid = options_.search;
    std::vector<double> levels_z;
    for (double h : grid.heights_m) levels_z.push_back(h);
    const auto& bottom = solver_.model().bottom;
    for (double d : grid.depths_m)
        if (!bottom || -d > bottom->z_m) levels_z.push_back(-d);
    std::sort(levels_z.begin(), levels_z.end(), std::greater<>());
    levels_z.erase(std::unique(levels_z.begin(), levels_z.end()), levels_z.end());

    table_ = std::make_unique<SearchTable>();
    SearchTable& t = *table_;
    t.azimuths = grid.azimuth_steps;
    t.distances = grid.distance_steps;
    t.levels = static_cast<int>(levels_z.size());
    const double ratio = std::pow(grid.max_distance_m / grid.min_distance_m, 1.0 / (grid.distance_steps - 1));
    t.positions.resize(static_cast<std::size_t>(t.azimuths) * t.distances * t.levels);
    for (int a = 0; a < t.azimuths; ++a) {
        const double azimuth = 2.0 * pi * a / t.azimuths;
        for (int d = 0; d < t.distances; ++d) {
            const double r = grid.min_distance_m * std::pow(ratio, d);
            for (int l = 0; l < t.levels; ++l)
                t.positions[t.index(a, d, l)] = {centre_.x + r * std::cos(azimuth), centre_.y + r * std::sin(azimuth),
                                                 levels_z[static_cast<std::size_t>(l)]};
        }
    }
    // The closed form finds the paths of a pair in about 10 µs, as fast as the table: there the
    // search table and the end of every fit use find_paths; on the other solvers (milliseconds
    // per pair) the travel-time table answers wherever it can.
    polish_exactly_ = solver_.name() == "closed";
    // On a profile whose index falls with depth somewhere (a duct) the map tables are the
    // stratified ones with every duct's families, whose build over the table's grid was not
    // measured to pay (minutes on models/halvard-log.toml): automatic keeps find_paths there.
    const bool ducts = !polish_exactly_ && !make_stratified_profile(solver_.model())->inversions().empty();
    const bool interpolate =
        options_.travel_times == LocateOptions::TravelTimes::interpolated ||
        (options_.travel_times == LocateOptions::TravelTimes::automatic && !ducts &&
         (!polish_exactly_ || options_.expected_events == 0 || options_.expected_events >= interpolation_pays_events));
    if (interpolate) {
        TravelTimeTableOptions table = options_.table;
        table.paths = options_.paths;
        table.threads = options_.threads;
        table.control = options_.control;
        // The table covers the search region, seen from the farthest receiver.
        double spread = 0.0;
        for (const Receiver& r : station_.receivers) spread = std::max(spread, std::hypot(r.x_m - centre_.x, r.y_m - centre_.y));
        table.max_distance_m = std::max(table.max_distance_m, grid.max_distance_m + spread + 100.0);
        for (double d : grid.depths_m) table.deepest_m = std::max(table.deepest_m, d);
        travel_times_ = std::make_unique<TravelTimeTable>(solver_, station_.receivers, table);
    }
    const TravelTimeTable* search_source = polish_exactly_ ? nullptr : travel_times_.get();

    const std::size_t receivers = station_.receivers.size();
    t.times_ns.assign(t.positions.size() * receivers * search_paths_per_receiver, std::numeric_limits<double>::quiet_NaN());
    t.path_counts.assign(t.positions.size() * receivers, 0);
    parallel_for(t.positions.size(), options_.threads, options_.control, [&](std::size_t p) {
        std::vector<TabulatedPath> tabulated;
        std::vector<double> times;
        for (std::size_t c = 0; c < receivers; ++c) {
            const Receiver& r = station_.receivers[c];
            times.clear();
            if (search_source && search_source->paths(c, t.positions[p], tabulated)) {
                for (const TabulatedPath& path : tabulated) times.push_back(path.time_s * 1e9);
            } else {
                try {
                    for (const ConnectedPath& path :
                         find_paths(solver_, t.positions[p], Point{r.x_m, r.y_m, r.z_m}, options_.paths))
                        times.push_back(path.time_s * 1e9);
                } catch (const InputError&) {
                    continue;  // a search position at a receiver: that receiver predicts nothing there
                } catch (const NumericalError&) {
                    continue;
                }
            }
            const std::size_t kept = std::min<std::size_t>(times.size(), search_paths_per_receiver);
            t.path_counts[p * receivers + c] = static_cast<unsigned char>(kept);
            for (std::size_t k = 0; k < kept; ++k) t.times_ns[(p * receivers + c) * search_paths_per_receiver + k] = times[k];
        }
    });
}

SourceLocator::~SourceLocator() = default;

std::size_t SourceLocator::search_positions() const { return table_->positions.size(); }

namespace {

// Trial positions where the model cannot answer (below the bottom, at a receiver, a channel in
// the shadow with a pulse to explain) are not candidates: their χ² is infinite. A channel whose
// paths cannot be found there (the source at the receiver) has none, as in compute_delays.
bool evaluate(const Predictor& predictor, const PreparedEvent& event, const Point& position, Evaluation& out) {
    out.position = position;
    out.assignment = Assignment{};
    const std::size_t channels = predictor.channels.size();
    out.times_ns.resize(channels);
    out.gradients.resize(channels);
    out.kinds.resize(channels);
    thread_local std::vector<TabulatedPath> tabulated;
    const double slowness = predictor.solver.model().index_at(position.z) / speed_of_light;
    for (std::size_t g = 0; g < channels; ++g) {
        out.times_ns[g].clear();
        out.gradients[g].clear();
        out.kinds[g].clear();
        if (predictor.table && predictor.table->paths(predictor.channels[g], position, tabulated)) {
            for (const TabulatedPath& p : tabulated) {
                out.times_ns[g].push_back(p.time_s * 1e9);
                out.gradients[g].push_back(p.gradient);
                out.kinds[g].push_back(p.kind);
            }
            continue;
        }
        const Receiver& r = predictor.event_receivers[g];
        std::vector<ConnectedPath> paths;
        try {
            paths = find_paths(predictor.solver, position, Point{r.x_m, r.y_m, r.z_m}, predictor.paths);
        } catch (const InputError&) {
            continue;
        } catch (const NumericalError&) {
            continue;
        }
        // ∇_source T = −n(source)/c · the launch direction (Fermat's principle, as compute_delays).
        for (const ConnectedPath& p : paths) {
            const double horizontal = std::sin(p.launch_zenith_rad);
            out.times_ns[g].push_back(p.time_s * 1e9);
            out.gradients[g].push_back({-slowness * horizontal * std::cos(p.azimuth_rad),
                                        -slowness * horizontal * std::sin(p.azimuth_rad),
                                        -slowness * std::cos(p.launch_zenith_rad)});
            out.kinds[g].push_back(p.kind);
        }
    }
    assign_pulses(event, [&](std::size_t g) -> const std::vector<double>& { return out.times_ns[g]; }, out.assignment);
    return out.assignment.valid;
}

// Normal equations of the weighted least squares at an evaluation: A = Jᵀ W J, b = Jᵀ W r for
// the unknowns (x, y, z in m, t0 in ns), with r = measured − predicted.
void normal_equations(const PreparedEvent& event, const Evaluation& e, Matrix4& a, Vector4& b) {
    a.setZero();
    b.setZero();
    for (std::size_t g = 0; g < event.channels.size(); ++g)
        for (int i : event.pulses_of[g]) {
            if (i < 0) continue;
            const auto k = static_cast<std::size_t>(i);
            if (e.assignment.path_of_pulse[k] < 0) continue;  // an unmatched pulse: a constant in χ²
            const auto path = static_cast<std::size_t>(e.assignment.path_of_pulse[k]);
            const auto& gradient = e.gradients[g][path];
            // ∂(predicted time)/∂(x, y, z, t0), ns per m and 1.
            const Vector4 row(gradient.dx * 1e9, gradient.dy * 1e9, gradient.dz * 1e9, 1.0);
            const double residual = event.time_ns[k] - e.assignment.t0_ns - e.times_ns[g][path];
            a += event.weight[k] * row * row.transpose();
            b += event.weight[k] * residual * row;
        }
}

struct Refined {
    bool valid = false;
    Evaluation at;
    int iterations = 0;
};

// Levenberg–Marquardt from a start position (Marquardt's scaling of the diagonal; the emission
// time is set to its optimum at every trial position, so only the position is carried).
Refined refine(const Predictor& predictor, const LocateOptions& options, const PreparedEvent& event, const Point& centre,
               const Point& start) {
    Refined out;
    if (!evaluate(predictor, event, start, out.at)) return out;
    out.valid = true;
    double lambda = 1e-3;
    Evaluation trial;
    Matrix4 a;
    Vector4 b;
    normal_equations(event, out.at, a, b);
    for (int iteration = 0; iteration < options.max_iterations; ++iteration) {
        out.iterations = iteration + 1;
        Matrix4 damped = a;
        for (int i = 0; i < 4; ++i) damped(i, i) += lambda * std::max(a(i, i), 1e-12);
        const Vector4 step = damped.ldlt().solve(b);
        // Gauss–Newton's predicted decrease of χ²: once it is far below 1 the position is within a
        // small fraction of σ of the minimum, and more steps change nothing a user can see.
        if (step.dot(b) < converged_chi2_decrease) break;
        Eigen::Vector3d move = step.head<3>();
        if (!move.allFinite()) break;
        // Far steps leave the region where the linearisation means anything: cap them.
        const Point& p = out.at.position;
        const double from_centre = std::hypot(p.x - centre.x, p.y - centre.y, p.z - centre.z);
        const double cap = std::max(50.0, 0.3 * from_centre);
        if (move.norm() > cap) move *= cap / move.norm();
        const Point next{p.x + move.x(), p.y + move.y(), p.z + move.z()};
        const bool better = evaluate(predictor, event, next, trial) &&
                            trial.assignment.chi2 <= out.at.assignment.chi2;
        if (better) {
            const double gain = out.at.assignment.chi2 - trial.assignment.chi2;
            std::swap(out.at, trial);
            normal_equations(event, out.at, a, b);
            lambda = std::max(lambda * 0.1, 1e-12);
            if (move.norm() < 1e-6 * (1.0 + from_centre) || gain < 1e-12 * (1.0 + out.at.assignment.chi2)) break;
        } else {
            lambda *= 10.0;
            if (lambda > 1e12) break;  // no step lowers χ²: a minimum to numerical precision
        }
    }
    return out;
}

// The end of a fit made on the travel-time table where find_paths is cheap: the exact paths at
// the table's minimum and one Gauss–Newton step from there with their gradients, the times
// carried along the step to first order. The table's minimum is within a small fraction of σ
// of the exact one (millimetres), so what the step leaves out is second order in it: far below
// the printed digits. Saves the second path search that another Levenberg–Marquardt step costs.
Refined finish_exactly(const Predictor& exact, const PreparedEvent& event, const Point& start) {
    Refined out;
    if (!evaluate(exact, event, start, out.at)) return out;
    out.valid = true;
    out.iterations = 1;
    Matrix4 a;
    Vector4 b;
    normal_equations(event, out.at, a, b);
    const Vector4 step = a.ldlt().solve(b);
    if (!step.allFinite() || step.dot(b) < converged_chi2_decrease) return out;
    Evaluation moved = out.at;
    moved.position = {start.x + step(0), start.y + step(1), start.z + step(2)};
    for (std::size_t g = 0; g < moved.times_ns.size(); ++g)
        for (std::size_t k = 0; k < moved.times_ns[g].size(); ++k) {
            const auto& gradient = moved.gradients[g][k];
            moved.times_ns[g][k] += (gradient.dx * step(0) + gradient.dy * step(1) + gradient.dz * step(2)) * 1e9;
        }
    assign_pulses(event, [&](std::size_t g) -> const std::vector<double>& { return moved.times_ns[g]; }, moved.assignment);
    // A step that would change the assignment or raise χ² is no longer small: keep the exact point.
    if (moved.assignment.valid && moved.assignment.chi2 <= out.at.assignment.chi2 &&
        moved.assignment.path_of_pulse == out.at.assignment.path_of_pulse)
        out.at = std::move(moved);
    return out;
}

// The fit's report at a minimum; false when the pulses do not fix the position there (the
// normal matrix is singular).
bool describe_fit(const ArrivalEvent& event, const PreparedEvent& prepared, const Refined& r, const Point& centre,
                  SourceFit& fit) {
    Matrix4 a;
    Vector4 b;
    normal_equations(prepared, r.at, a, b);
    const Eigen::SelfAdjointEigenSolver<Matrix4> eigen(a);
    const auto& values = eigen.eigenvalues();
    if (!(values.minCoeff() > 1e-12 * values.maxCoeff())) return false;
    const Matrix4 covariance = eigen.eigenvectors() * values.cwiseInverse().asDiagonal() * eigen.eigenvectors().transpose();
    fit.position = r.at.position;
    fit.emission_time_ns = r.at.assignment.t0_ns;
    fit.chi2 = r.at.assignment.chi2;
    fit.ndof = static_cast<int>(event.pulses.size()) - 4;
    for (int i = 0; i < 3; ++i)
        for (int j = 0; j < 3; ++j) fit.covariance_m2[i][j] = 0.5 * (covariance(i, j) + covariance(j, i));
    fit.view = view_from_centre(centre, fit.position, fit.covariance_m2);
    fit.iterations = r.iterations;
    fit.unmatched_pulses = r.at.assignment.unmatched;
    fit.pulses.clear();
    for (std::size_t k = 0; k < event.pulses.size(); ++k) {
        const MeasuredPulse& m = event.pulses[k];
        const auto g = static_cast<std::size_t>(
            std::find(prepared.channels.begin(), prepared.channels.end(), m.channel) - prepared.channels.begin());
        AssignedPulse p;
        p.channel = m.channel;
        p.line = m.line;
        p.time_ns = m.time_s * 1e9;
        p.sigma_ns = m.sigma_s * 1e9;
        if (r.at.assignment.path_of_pulse[k] < 0) {
            p.matched = false;
            p.path_rank = 0;
            fit.pulses.push_back(p);
            continue;
        }
        const auto path = static_cast<std::size_t>(r.at.assignment.path_of_pulse[k]);
        p.kind = r.at.kinds[g][path];
        p.path_rank = static_cast<int>(path) + 1;
        p.residual_ns = p.time_ns - r.at.assignment.t0_ns - r.at.times_ns[g][path];
        fit.pulses.push_back(p);
    }
    return true;
}

}  // namespace

EventFit SourceLocator::fit(const ArrivalEvent& event) const {
    EventFit result;
    result.event = event.name;
    result.first_line = event.first_line;
    if (!event.error.empty()) {
        result.error = event.error;
        return result;
    }
    if (const std::string problem = arrival_event_problem(event, station_); !problem.empty()) {
        result.error = fmt::format("line {}: {}", problem_line(event, station_), problem);
        return result;
    }
    const PreparedEvent prepared = prepare(event);
    std::vector<Receiver> event_receivers;
    for (std::size_t c : prepared.channels) event_receivers.push_back(station_.receivers[c]);
    const Predictor exact{solver_, nullptr, prepared.channels, event_receivers, options_.paths};
    const Predictor interpolated{solver_, travel_times_.get(), prepared.channels, event_receivers, options_.paths};
    // Each candidate is refined on the table (find_paths where the table does not answer); where
    // find_paths is cheap (the closed form) the fits that can be reported are then finished
    // with one exact evaluation and Gauss–Newton step from the table's minimum (the exact fit's answer);
    // elsewhere the table's minimum is the answer (docs/locate.md, "The end of a fit").
    const bool on_table = travel_times_ != nullptr;
    const auto refine_candidate = [&](const Point& start) {
        if (!on_table) return refine(exact, options_, prepared, centre_, start);
        Refined r = refine(interpolated, options_, prepared, centre_, start);
        return r.valid ? r : refine(exact, options_, prepared, centre_, start);
    };

    // Coarse search, coarse to fine: χ² (with the best assignment there) first on every
    // coarse_stride-th azimuth, distance and level of the search grid, then, from the best
    // local minima of that sub-grid, a descent on the full grid to its local minimum. χ² of the
    // full grid is computed only where the descent looks (NaN: not computed yet).
    const SearchTable& t = *table_;
    const std::size_t receivers = station_.receivers.size();
    std::vector<double> chi2(t.positions.size(), std::numeric_limits<double>::quiet_NaN());
    Assignment assignment;
    const auto chi2_at = [&](std::size_t p) {
        if (!std::isnan(chi2[p])) return chi2[p];
        assign_pulses(
            prepared,
            [&](std::size_t g) {
                const std::size_t slot = p * receivers + prepared.channels[g];
                return std::span<const double>(&t.times_ns[slot * search_paths_per_receiver], t.path_counts[slot]);
            },
            assignment, coarse_rounds);
        // The coarse search keeps only positions that explain every pulse: there a missing path
        // is not a small penalty but a sign of the wrong region.
        chi2[p] = assignment.unmatched == 0 ? assignment.chi2 : infinite_chi2;
        return chi2[p];
    };
    // Is p lower than every neighbour at the given stride in azimuth, distance and level?
    // Ties go to the lower index, so that a flat region yields one minimum.
    const auto local_minimum = [&](int a, int d, int l, int stride) {
        const std::size_t p = t.index(a, d, l);
        const double here = chi2_at(p);
        if (!std::isfinite(here)) return false;
        for (int da = -stride; da <= stride; da += stride)
            for (int dd = -stride; dd <= stride; dd += stride)
                for (int dl = -stride; dl <= stride; dl += stride) {
                    const int nd = d + dd, nl = l + dl;
                    if (nd < 0 || nd >= t.distances || nl < 0 || nl >= t.levels) continue;
                    const std::size_t q = t.index(((a + da) % t.azimuths + t.azimuths) % t.azimuths, nd, nl);
                    if (q == p) continue;
                    const double there = chi2_at(q);
                    if (there < here || (there == here && q < p)) return false;
                }
        return true;
    };
    // A grid too small to thin (or whose azimuths would not close the circle) is searched whole.
    const int stride =
        (t.azimuths % coarse_stride == 0 && t.distances > 2 * coarse_stride && t.levels > 2 * coarse_stride) ? coarse_stride
                                                                                                            : 1;
    std::vector<std::size_t> coarse_minima;
    for (int a = 0; a < t.azimuths; a += stride)
        for (int d = 0; d < t.distances; d += stride)
            for (int l = 0; l < t.levels; l += stride)
                if (local_minimum(a, d, l, stride)) coarse_minima.push_back(t.index(a, d, l));
    std::sort(coarse_minima.begin(), coarse_minima.end(), [&](std::size_t x, std::size_t y) { return chi2[x] < chi2[y]; });
    if (coarse_minima.size() > static_cast<std::size_t>(options_.candidates))
        coarse_minima.resize(static_cast<std::size_t>(options_.candidates));
    // Candidates: the full grid's local minima reached from those (each basin once: mirror
    // positions, other assignments), best first.
    std::vector<std::size_t> minima;
    for (std::size_t start : coarse_minima) {
        std::size_t p = start;
        for (;;) {  // steepest descent over the 26 neighbours; χ² falls at every move, so it ends
            const int a = static_cast<int>(p / (static_cast<std::size_t>(t.distances) * t.levels));
            const int d = static_cast<int>(p / static_cast<std::size_t>(t.levels) % static_cast<std::size_t>(t.distances));
            const int l = static_cast<int>(p % static_cast<std::size_t>(t.levels));
            std::size_t best = p;
            for (int da = -1; da <= 1; ++da)
                for (int dd = -1; dd <= 1; ++dd)
                    for (int dl = -1; dl <= 1; ++dl) {
                        const int nd = d + dd, nl = l + dl;
                        if (nd < 0 || nd >= t.distances || nl < 0 || nl >= t.levels) continue;
                        const std::size_t q = t.index((a + da + t.azimuths) % t.azimuths, nd, nl);
                        const double there = chi2_at(q);
                        if (there < chi2[best] || (there == chi2[best] && q < best)) best = q;
                    }
            if (best == p) break;
            p = best;
        }
        if (std::find(minima.begin(), minima.end(), p) == minima.end()) minima.push_back(p);
    }
    std::sort(minima.begin(), minima.end(), [&](std::size_t x, std::size_t y) { return chi2[x] < chi2[y]; });
    if (minima.size() > static_cast<std::size_t>(options_.candidates)) minima.resize(static_cast<std::size_t>(options_.candidates));
    if (minima.empty()) {
        result.error = fmt::format("line {}: no position of the search region explains the pulses of event '{}' (every "
                                   "channel with two pulses needs two paths)",
                                   event.first_line, printable_excerpt(event.name));
        return result;
    }

    std::vector<SourceFit> fits;
    bool unconstrained = false;
    bool good_enough = false;
    for (std::size_t i = 0; i < minima.size(); ++i) {
        // Further candidates only when the best fit so far is poor, or when their coarse χ² rivals
        // the first one's (a competing basin: a mirror position, another assignment).
        const bool rival = chi2[minima[i]] <= rival_chi2_factor * chi2[minima.front()] + options_.alternative_chi2_margin;
        if (i > 0 && good_enough && !rival) continue;
        const Refined r = refine_candidate(t.positions[minima[i]]);
        if (!r.valid) continue;
        SourceFit fit;
        if (!describe_fit(event, prepared, r, centre_, fit)) {
            unconstrained = true;
            continue;
        }
        good_enough |= acceptable_fit(fit.chi2, fit.ndof);
        // The same minimum reached from two starts is kept once.
        const bool seen = std::any_of(fits.begin(), fits.end(), [&](const SourceFit& f) {
            const double apart = std::hypot(f.position.x - fit.position.x, f.position.y - fit.position.y,
                                            f.position.z - fit.position.z);
            return apart < 1.0 + 1e-3 * f.view.distance_m;
        });
        if (!seen) fits.push_back(std::move(fit));
    }
    if (fits.empty()) {
        result.error = unconstrained
                           ? fmt::format("line {}: the pulses of event '{}' do not fix the source position (the fit's "
                                         "normal matrix is singular)",
                                         event.first_line, printable_excerpt(event.name))
                           : fmt::format("line {}: no fit of event '{}' converged to a position the model can join "
                                         "to every channel",
                                         event.first_line, printable_excerpt(event.name));
        return result;
    }
    std::sort(fits.begin(), fits.end(), [](const SourceFit& x, const SourceFit& y) { return x.chi2 < y.chi2; });
    if (on_table && polish_exactly_) {
        // Only fits that can be reported are finished: the table's χ² is within far less than
        // polish_chi2_slack of the exact one, so the others stay beyond the margin.
        const double reportable = fits.front().chi2 + options_.alternative_chi2_margin + polish_chi2_slack;
        std::vector<SourceFit> polished;
        for (SourceFit& fit : fits) {
            if (fit.chi2 > reportable) break;
            const Refined r = finish_exactly(exact, prepared, fit.position);
            SourceFit exact_fit;
            if (r.valid && describe_fit(event, prepared, r, centre_, exact_fit)) {
                exact_fit.iterations += fit.iterations;
                polished.push_back(std::move(exact_fit));
            } else {
                polished.push_back(std::move(fit));  // keep the table's answer, good to 0.01 ns
            }
        }
        fits = std::move(polished);
        std::sort(fits.begin(), fits.end(), [](const SourceFit& x, const SourceFit& y) { return x.chi2 < y.chi2; });
    }
    result.best = std::move(fits.front());
    for (std::size_t i = 1; i < fits.size(); ++i)
        if (fits[i].chi2 - result.best->chi2 <= options_.alternative_chi2_margin) result.alternatives.push_back(std::move(fits[i]));
    return result;
}

std::vector<EventFit> locate_events(const SourceLocator& locator, const std::vector<ArrivalEvent>& events, int threads,
                                    const RunControl& control) {
    std::vector<EventFit> fits(events.size());
    parallel_for(events.size(), threads, control, [&](std::size_t i) { fits[i] = locator.fit(events[i]); });
    return fits;
}

}  // namespace firnray

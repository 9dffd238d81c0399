#include "solver/snell_integrals.hpp"

#include <algorithm>
#include <array>
#include <atomic>
#include <bit>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <limits>
#include <memory>
#include <optional>
#include <vector>

#include <boost/math/tools/roots.hpp>
#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "core/text.hpp"
#include "model/firn_model.hpp"

namespace firnray {

// Snell integrals over whole blocks of cells, tabulated over the ray parameter. Blocks are
// dyadic: level L holds cells [i·2^L, (i+1)·2^L), so any run of whole cells inside a leg is a
// few blocks. With N the smallest n on a block (at z_min) and w = √(N − ξ), the block's integrals
// are analytic in w except where n(z) = ξ or n′(z) = 0 with n(z) = ξ, i.e. at ξ = n of a cell
// end or extremum of the block: all at w² = N − n <= 0, on the imaginary axis of w (a ray crossing
// a whole block has ξ < N). At w = 0 itself they are analytic when N is reached at an end of the
// block with n′ ≠ 0 (the inverse square root becomes a term linear in w), and so is w·∂x/∂ξ.
// So Chebyshev series in w converge fast on pieces whose squares double, w² in
// [w0² 2^(j−1), w0² 2^j] for piece j >= 1 and w in [0, w0] for piece 0, with w0 <= √Δ/2 (Δ: the
// smallest n − N > 0 at a cell end or run end of the block): about 1e-15 at degree 16. Each piece
// is built on first use at its Chebyshev nodes, from the direct quadrature (level 0) or from the
// blocks one level down (each built and checked the same way), checked (small last coefficients,
// and two more points against the sum it was built from), and kept as "integrate directly" when a
// check fails. Where N is a minimum of n (n′ = 0: a logarithm at w = 0), or piece 0 fails its
// checks (n′ small at z_min: the same logarithm, blurred over w ~ n′/√(2n″), too close to the
// real axis for one series on [0, w0]), piece 0 is cut into dyadic pieces in w² too, going down
// (see base_levels): on the 200-point log of the tests they agree with the direct quadrature to
// 1e-14 relative for n − ξ from 1e-3 to 1e-15.
struct SnellCellTables {
    static constexpr int degree = 16;
    static constexpr int nodes = degree + 1;
    // The four series of a piece: x/ξ (series 0), c·T (1), s (2) and w·∂x/∂ξ (3). Stored by degree,
    // the pairs that the evaluation takes side by side next to each other: x/ξ and w·∂x/∂ξ, then
    // c·T and s (slot_of).
    struct Piece {
        bool tabulated = false;
        double w_low = 0.0, w_high = 0.0;
        alignas(16) double coefficients[nodes][4] = {};
        static constexpr int slot_of[4] = {0, 2, 3, 1};
        double& coefficient(int series, int m) { return coefficients[m][slot_of[series]]; }
        double coefficient(int series, int m) const { return coefficients[m][slot_of[series]]; }
    };
    struct Block {
        std::size_t first_cell = 0, last_cell = 0;
        double z_top = 0.0, z_bottom = 0.0;  // its extent (the cells', or a part of one cell)
        bool tabulated = false;    // false: n (all but) constant on the block, always direct
        bool direct_base = false;  // N is a minimum of n (n′ = 0 there): piece 0 always split (base_levels)
        double z_min = 0.0;        // where n is smallest on the block
        std::size_t cell_min = 0;  // a cell of the block holding z_min
        double n_min = 0.0;        // N, from that cell's formula
        int w0_exponent = 0;       // w0² = 2^w0_exponent
        // Slots [first_piece, first_piece + piece_count): the pieces above (piece 0 and up), then
        // the base_levels pieces below w0 (base_slot).
        std::size_t first_piece = 0, piece_count = 0;
    };
    // Where N is a minimum of n with n′ = 0, the block's integrals go like A + B·log w as w → 0
    // (A, B analytic in w²): piece 0 is replaced by pieces w² in [w0² 2^(−k−1), w0² 2^(−k)],
    // and so it is wherever piece 0 fails its checks,
    // k < base_levels (down to w² ~ 1e-30·w0², far below a rounding error of ξ, for the path
    // finder's first sample next to a minimum, n − ξ ~ 1e-24 of its range), on each of which
    // the series in w converge as on the pieces above (the singularity at w = 0 lies as far off,
    // relative to the piece's width); below the last, the block is integrated directly.
    static constexpr int base_levels = 100;
    static std::size_t base_slot(const Block& block, int k) {
        return block.piece_count - static_cast<std::size_t>(base_levels) + static_cast<std::size_t>(k);
    }

    // levels[L][i]: the block of level L starting at cell i·2^L, or, with every_offset, at cell i.
    std::vector<std::vector<Block>> levels;
    // Blocks of every level start at every cell (profiles of up to max_every_offset cells), not at
    // multiples of their size only: a run of whole cells is then the blocks of its length's binary
    // digits, from its first cell down (about half as many as aligned blocks need).
    bool every_offset = false;
    static constexpr std::size_t max_every_offset = 512;
    const Block& block_at(std::size_t level, std::size_t cell) const {
        return levels[level][every_offset ? cell : cell >> level];
    }
    std::unique_ptr<std::atomic<Piece*>[]> pieces;
    std::size_t piece_total = 0;

    // A cell where n is strictly monotone, for rays turning inside it: the part of the cell from
    // the turning point to the end where n is largest, a function of ξ alone. With σ = n_high − ξ
    // and ρ = ξ − n_low (σ + ρ = Δ), it goes like √σ as σ → 0 and is analytic in ξ at ρ = 0 unless
    // n′ vanishes at that end (then a logarithm). Both are entire in log σ and log ρ, whose other
    // singularities (σ or ρ < 0) lie at least π off the real axis: pieces σ (toward the high end)
    // or ρ (toward the low end) in [Δ 2^(−j−2), Δ 2^(−j−1)], j < turn_levels, in the variable
    // log σ or log ρ; the four series are x/ξ, c·T, s and √σ·dx/dξ (the turning end moving).
    static constexpr int turn_levels = 90;
    struct TurnCell {
        bool tabulated = false;
        double z_high = 0.0, z_low = 0.0;  // the ends where n is largest and smallest
        double n_high = 0.0, n_low = 0.0;  // from the cell's formula
        std::size_t first_piece = 0;       // 2 × turn_levels pieces
        // n′ = 0 at the low end (a double root as ξ → n_low: x grows like log ρ). The pieces toward
        // it are built from the cubic's expansion about that end (turning_beside_minimum) where n″
        // > 0 beyond the turning point, not from a turning depth found in z, whose rounding would
        // scatter x by up to 1e-8 relative there and fail the pieces' checks.
        bool low_double_root = false;
    };
    std::vector<TurnCell> turn_cells;
    std::unique_ptr<std::atomic<Piece*>[]> turn_pieces;
    std::size_t turn_piece_total = 0;

    SnellCellTables() = default;
    SnellCellTables(const SnellCellTables&) = delete;
    SnellCellTables& operator=(const SnellCellTables&) = delete;
    ~SnellCellTables() {
        for (std::size_t i = 0; i < piece_total; ++i) delete pieces[i].load(std::memory_order_acquire);
        for (std::size_t i = 0; i < turn_piece_total; ++i) delete turn_pieces[i].load(std::memory_order_acquire);
    }

    // The piece of a block that holds w² = N − ξ, built if needed; null where the block is
    // integrated otherwise. Inline where it is a piece above w0 built already (the hot path).
    const Piece* piece(const StratifiedProfile& profile, std::size_t level, const Block& block, double w_squared) {
        const int above_base = exponent_of(w_squared) - block.w0_exponent;
        if (above_base >= 0) {
            const std::size_t index = static_cast<std::size_t>(above_base) + 1;
            if (index >= block.piece_count - base_levels) return nullptr;
            if (const Piece* found = pieces[block.first_piece + index].load(std::memory_order_acquire))
                return found->tabulated ? found : nullptr;
        }
        return piece_in(profile, level, block, w_squared, pieces.get() + block.first_piece);
    }
    // std::ilogb of a positive finite x, from its bits where x is normal.
    static int exponent_of(double x) {
        const int biased = static_cast<int>((std::bit_cast<std::uint64_t>(x) >> 52) & 0x7ff);
        return biased == 0 || biased == 0x7ff ? std::ilogb(x) : biased - 1023;
    }

    // The piece of a turning cell for σ and ρ (both > 0), built if needed; null where the cell is
    // integrated otherwise. `variable` receives the piece's variable (log σ or log ρ).
    const Piece* turn_piece(const StratifiedProfile& profile, std::size_t cell, double sigma, double rho,
                            double& variable);

private:
    const Piece* piece_in(const StratifiedProfile& profile, std::size_t level, const Block& block, double w_squared,
                          std::atomic<Piece*>* slots);
    static std::unique_ptr<Piece> build(const StratifiedProfile& profile, std::size_t level, const Block& block,
                                        std::size_t index);
    static std::unique_ptr<Piece> build_turn(const StratifiedProfile& profile, std::size_t cell, const TurnCell& turn,
                                             std::size_t index);
    // Coefficients of a piece from its values at the Chebyshev nodes, then checked; false when
    // a check fails (the piece stays "integrate directly").
    template <class Values>
    static bool fit(Piece& piece, const Values& values_at);
};

namespace {

constexpr double infinity = std::numeric_limits<double>::infinity();
constexpr double not_a_number = std::numeric_limits<double>::quiet_NaN();

// Gauss–Legendre nodes and weights on [−1, 1] (Newton on the Legendre recurrence).
struct GaussRule {
    std::vector<double> nodes, weights;
};
GaussRule make_gauss_rule(int points) {
    GaussRule rule;
    for (int i = 1; i <= points; ++i) {
        double x = std::cos(pi * (i - 0.25) / (points + 0.5)), derivative = 0.0;
        for (int iteration = 0; iteration < 100; ++iteration) {
            double p0 = 1.0, p1 = x;
            for (int k = 2; k <= points; ++k) {
                const double p2 = ((2.0 * k - 1.0) * x * p1 - (k - 1.0) * p0) / k;
                p0 = p1;
                p1 = p2;
            }
            derivative = points * (x * p1 - p0) / (x * x - 1.0);
            const double step = p1 / derivative;
            x -= step;
            if (std::abs(step) < 1e-16) break;
        }
        rule.nodes.push_back(x);
        rule.weights.push_back(2.0 / ((1.0 - x * x) * derivative * derivative));
    }
    return rule;
}
const GaussRule& rule(int points) {
    static const std::array<GaussRule, 4> rules{make_gauss_rule(4), make_gauss_rule(6), make_gauss_rule(10),
                                                make_gauss_rule(16)};
    switch (points) {
        case 4: return rules[0];
        case 6: return rules[1];
        case 10: return rules[2];
        default: return rules[3];
    }
}

struct Sums {
    double x = 0.0, optical = 0.0, length = 0.0, derivative = 0.0, attenuation = 0.0;
};

// Taylor coefficients a0 … a6 of Q² = n² − ξ² about a point, with n taken as the cubic
// n + n′δ + n″δ²/2 + n‴δ³/6 there (exact for a table's cells). By Fujiwara's bound every zero of
// a0 + a1 δ + … + a6 δ⁶ has |δ| >= 1 / (2 max_k |a_k/a0|^(1/k)), so a panel of half-width h
// centred there has no zero of Q² within t·h when |a_k| <= a0 (1/(2 t h))^k for every k.
struct SquareTaylor {
    double a0 = 0.0;
    double a[6] = {0.0, 0.0, 0.0, 0.0, 0.0, 0.0};

    SquareTaylor(double gap, double n, double xi, double n1, double n2, double n3) {
        a0 = gap * (n + xi);
        const double m2 = 0.5 * n2, m3 = n3 / 6.0;
        a[0] = 2.0 * n * n1;
        a[1] = n1 * n1 + 2.0 * n * m2;
        a[2] = 2.0 * n * m3 + 2.0 * n1 * m2;
        a[3] = m2 * m2 + 2.0 * n1 * m3;
        a[4] = 2.0 * m2 * m3;
        a[5] = m3 * m3;
    }
    bool zero_free_within(double radius) const {
        if (!(a0 > 0.0)) return false;
        const double s = 0.5 / radius;
        double power = s;
        for (double ak : a) {
            if (std::abs(ak) > a0 * power) return false;
            power *= s;
        }
        return true;
    }
};

class LegQuadrature {
public:
    // attenuation: a depth-dependent attenuation length to integrate ∫ ds/L along (or null).
    // table_levels: whole cells from the profile's SnellCellTables, blocks of levels below this
    // (0: quadrature only).
    // aligned_blocks: whole cells from blocks that start at multiples of their size only, where
    // the tables also have blocks at every cell (the pieces of those are built from these, shared
    // by every block built over them, not from their own halves: fewer pieces to build).
    LegQuadrature(const StratifiedProfile& profile, const RayLevel& level, bool with_time, bool with_derivative,
                  const AttenuationProfile* attenuation, std::size_t table_levels, bool aligned_blocks = false)
        : profile_(profile), level_(level), xi_(level.ray_parameter), with_time_(with_time),
          with_derivative_(with_derivative), attenuation_(attenuation), table_levels_(attenuation ? 0 : table_levels),
          aligned_blocks_(aligned_blocks) {}

    // Panels of [low, high] inside one cell, none of which ends at a zero of Q.
    void regular(std::size_t cell, double low, double high, int depth = 0) {
        if (!(high > low) || failed_) return;
        if (depth == 0 && over_double_root(cell, low, high)) return;
        const double centre = 0.5 * (low + high), half = 0.5 * (high - low);
        double n, dn, d2n;
        profile_.evaluate(cell, centre, n, dn, d2n);
        const double g = profile_.gap_in_cell(level_, cell, centre, n);
        if (!(g > 0.0) || ++panels_ > max_panels) {
            fail();
            return;
        }
        const SquareTaylor taylor(g, n, xi_, dn, d2n, profile_.third_derivative(cell, centre));
        // Gauss–Legendre with m points errs like ρ^(−2m), ρ = t + √(t² − 1), with t·half the
        // distance to the nearest zero of Q²: these thresholds keep that near 1e-13 (Fujiwara's
        // bound is a lower bound, often by a factor ~2). 16 points down to t = 1.5 (4e-14 at the
        // bound itself) rather than two halves, each of which would split again.
        int points = 0;
        if (taylor.zero_free_within(16.0 * half)) points = 4;
        else if (taylor.zero_free_within(5.0 * half)) points = 6;
        else if (taylor.zero_free_within(2.1 * half) || depth >= 60) points = 10;
        else if (taylor.zero_free_within(1.5 * half)) points = 16;
        if (points == 0) {
            regular(cell, low, centre, depth + 1);
            regular(cell, centre, high, depth + 1);
            return;
        }
        const GaussRule& r = rule(points);
        for (std::size_t i = 0; i < r.nodes.size(); ++i) {
            const double z = centre + half * r.nodes[i], w = half * r.weights[i];
            double nz, dnz, d2nz;
            profile_.evaluate(cell, z, nz, dnz, d2nz);
            const double gz = profile_.gap_in_cell(level_, cell, z, nz);
            if (!(gz > 0.0)) {
                fail();
                return;
            }
            const double q2 = gz * (nz + xi_), inverse_q = 1.0 / std::sqrt(q2);
            sums_.x += w * xi_ * inverse_q;
            if (with_time_) {
                sums_.optical += w * nz * nz * inverse_q;
                sums_.length += w * nz * inverse_q;
                if (attenuation_) sums_.attenuation += w * nz * inverse_q / attenuation_->length_m(z);
            }
            if (with_derivative_) sums_.derivative += w * nz * nz * inverse_q / q2;
        }
    }

    // A local minimum of n for over_double_root: n − ξ at z_m + side·δ comes from the cubic's
    // expansion about z_m in δ itself (through z, δ would be rounded to an ulp of z, a relative
    // error of 1e-11 in n − ξ where δ is 1e-4).
    struct DoubleRoot {
        double z = 0.0, n = 0.0, gap = 0.0, slope = 0.0, half_curvature = 0.0, sixth_third = 0.0;
    };

    // [low, high] inside one cell when it holds a local minimum z_m of n where n′ = 0 and ξ lies
    // just below n there (g = n(z_m) − ξ > 0, small): Q² has two zeros at z_m ± i·s (about),
    // s = √(2g/n″), so close to the real axis that panels in z must shrink geometrically toward
    // z_m (a hundred and more of them where g is 1e-11 or less). With z = z_m ± s·sinh t the
    // integrands become smooth in t (Q ≈ √(n n″)·s·cosh t cancels dz/dt = s·cosh t): the sinh
    // transformation for nearly singular integrals (common practice). Their singularities in t
    // are those two zeros, at t = ±iπ/2, and the cubic's third zero, real and beyond the interval
    // (the panels are graded toward it); Gauss–Legendre with 16 points on panels of at most 1.5 in
    // t then errs by about (π/1.5 + √((π/1.5)² − 1))^−32 ≈ 1e-19 relative. Cubic cells only (a
    // table's), where the expansion about z_m is exact. Part of the direct quadrature too (the
    // reference of the tables): its panels in z are only good to about 1e-9 m there. False when
    // this does not apply.
    bool over_double_root(std::size_t cell, double low, double high) {
        if (!profile_.is_cubic(cell)) return false;
        const auto& minima = profile_.local_minima_z();  // from the surface down
        const auto found = std::lower_bound(minima.begin(), minima.end(), high, std::greater<>());
        if (found == minima.end() || *found < low) return false;
        DoubleRoot root;
        root.z = *found;
        double d2n = 0.0;
        profile_.evaluate(cell, root.z, root.n, root.slope, d2n);
        root.gap = profile_.gap_in_cell(level_, cell, root.z, root.n);
        // ξ at or above n of the minimum, to the last bit: a ray that meets it there runs along it
        // for ever (x diverges like ∫ dδ/|δ|), and one with ξ above it cannot pass it at all. Taken as
        // that limit at once, where panels shrinking toward z_m would stop at a large finite x.
        if (!(root.gap > 0.0)) {
            fail();
            return true;
        }
        if (!(d2n > 0.0)) return false;
        root.half_curvature = 0.5 * d2n;
        const double third = profile_.third_derivative(cell, root.z);
        root.sixth_third = third / 6.0;
        const double s = std::sqrt(2.0 * root.gap / d2n);
        // Not nearly singular (ordinary panels do well), or n′ too large for the zeros to sit at ±i·s.
        if (!(4.0 * s < high - low) || !(std::abs(root.slope) <= 0.1 * std::sqrt(2.0 * d2n * root.gap))) return false;
        // The third zero of the cubic n − ξ, at δ ≈ −3n″/n‴ from z_m, on one side.
        const double third_zero = third != 0.0 ? -3.0 * d2n / third : infinity;
        for (const double side : {1.0, -1.0}) {
            const double reach = side > 0.0 ? high - root.z : root.z - low;
            if (!(reach > 0.0)) continue;
            const double beyond = third_zero * side > 0.0 ? std::abs(third_zero) : infinity;
            if (!(beyond > reach)) return false;
            SinhCoshNodes at_nodes;
            graded_panels(std::asinh(reach / s), std::asinh(beyond / s),
                          [&](double a, double b) { sinh_panel(root, side, s, a, b, at_nodes); });
        }
        return true;
    }

    // Panels covering [0, t_end] for 16-point Gauss–Legendre in the variables above, where the
    // integrands' complex singularities lie at least π/2 off the real axis: at most 1.5 long,
    // evenly; and, toward a real singularity at t_pole > t_end (the cubic's third zero), at most
    // half their start's distance to it, so that every panel keeps its error near 1e-18.
    template <class Panel>
    static void graded_panels(double t_end, double t_pole, const Panel& panel) {
        constexpr double longest = 1.5;
        if (!std::isfinite(t_pole) || t_pole - t_end >= 2.0 * longest) {
            const int panels = std::max(1, static_cast<int>(std::ceil(t_end / longest)));
            for (int i = 0; i < panels; ++i) panel(t_end * i / panels, t_end * (i + 1) / panels);
            return;
        }
        for (double t = 0.0; t < t_end;) {
            double next = std::min(t_end, t + std::min(longest, 0.5 * (t_pole - t)));
            // A pole within rounding of t_end: the halving would never arrive.
            if (!(next > t) || next - t < 1e-3 * longest) next = t_end;
            panel(t, next);
            t = next;
        }
    }

    // sinh t and cosh t at the 16 Gauss–Legendre nodes of a panel [centre − half, centre + half]
    // in t >= 0: e^(centre ± half·x) = e^centre·e^(±half·x) from one exponential per panel and those
    // of the node offsets, kept while the panels' width stays the same (graded_panels makes them
    // equal but for the ones graded toward a pole). The nodes are symmetric (x[15 − i] = −x[i]).
    // Where t is small, sinh t = (p − 1/p)/2 keeps an absolute error of an ulp: the node moves by
    // 1e-16 in t, the weight (cosh) agreeing with it, so the sum moves by as little.
    class SinhCoshNodes {
    public:
        static constexpr int count = 16;
        double sinh_t[count], cosh_t[count];

        void panel(double centre, double half) {
            if (half != half_) {
                half_ = half;
                const GaussRule& r = rule(count);
                for (int i = 0; i < count / 2; ++i) {
                    up_[i] = std::exp(half * r.nodes[i]);
                    down_[i] = 1.0 / up_[i];
                }
            }
            const double e = std::exp(centre), inverse = 1.0 / e;
            for (int i = 0; i < count / 2; ++i) {
                const double p = e * up_[i], q = inverse * down_[i];  // node i: centre + half·x[i]
                sinh_t[i] = 0.5 * (p - q);
                cosh_t[i] = 0.5 * (p + q);
                const double pm = e * down_[i], qm = inverse * up_[i];  // node 15 − i: centre − half·x[i]
                sinh_t[count - 1 - i] = 0.5 * (pm - qm);
                cosh_t[count - 1 - i] = 0.5 * (pm + qm);
            }
        }

    private:
        double half_ = -1.0;
        double up_[count / 2] = {}, down_[count / 2] = {};
    };

    void sinh_panel(const DoubleRoot& root, double side, double s, double a, double b, SinhCoshNodes& at_nodes) {
        const GaussRule& r = rule(16);
        const double centre = 0.5 * (a + b), half = 0.5 * (b - a);
        at_nodes.panel(centre, half);
        for (std::size_t i = 0; i < r.nodes.size(); ++i) {
            const double sinh_t = at_nodes.sinh_t[i], cosh_t = at_nodes.cosh_t[i];
            const double delta = s * sinh_t, w = half * r.weights[i] * s * cosh_t;
            const double rise =
                side * delta * (root.slope + side * delta * (root.half_curvature + side * delta * root.sixth_third));
            const double gz = root.gap + rise, nz = root.n + rise;
            const double q2 = gz * (nz + xi_), inverse_q = 1.0 / std::sqrt(q2);
            sums_.x += w * xi_ * inverse_q;
            if (with_time_) {
                sums_.optical += w * nz * nz * inverse_q;
                sums_.length += w * nz * inverse_q;
                if (attenuation_) sums_.attenuation += w * nz * inverse_q / attenuation_->length_m(root.z + side * delta);
            }
            if (with_derivative_) sums_.derivative += w * nz * nz * inverse_q / q2;
        }
    }

    // The part of a turning end's cell from the turning point z_t to the cell's boundary (inward:
    // +1 up, −1 down), where n″ > 0: besides the zero of n − ξ at z_t, Q² has one at about
    // z_t − 2d·inward, d = n′(z_t)/n″. When a local minimum of n where n′ = 0 lies just beyond z_t
    // (ξ a hair above that minimum: a ray turning next to a double root) d is tiny and panels in z
    // must shrink geometrically toward z_t. With z = z_t + inward·δ, δ + d = d·cosh τ, the
    // integrands are smooth in τ (δ(δ + 2d) = d² sinh² τ, and dz/dτ = d·sinh τ cancels the root);
    // their singularities in τ lie at ±iπ (that second zero), ±iπ/2 (n′ = 0, in the derivative's
    // h = 1/(n n′)) and at the cubic's third zero, beyond the part: the panels of
    // over_double_root. The ξ-derivative with the end moving is taken by parts as in end_piece.
    // Cubic cells only, when the leg goes on beyond the cell and no turning-cell table serves it, or
    // ends at a fixed depth inside the cell (the part then reaches that end); not in the direct
    // quadrature (which keeps the end piece). The depth the part reaches; NaN when this does not
    // apply.
    double turning_next_to_double_root(std::size_t cell, double z_t, int inward, LegEndpoint other_end) {
        if (table_levels_ == 0 || failed_ || !profile_.is_cubic(cell)) return not_a_number;
        double boundary = inward > 0 ? profile_.cell_top(cell) : profile_.cell_bottom(cell);
        if (!(inward > 0 ? other_end.z > boundary : other_end.z < boundary)) {
            if (other_end.kind != LegEnd::fixed) return not_a_number;
            boundary = other_end.z;
        }
        const double reach = (boundary - z_t) * inward;
        if (!(reach > 0.0)) return not_a_number;
        TurningRoot root;
        root.inward = inward;
        root.z = z_t;
        double n1 = 0.0;
        profile_.evaluate(cell, z_t, root.n, n1, root.curvature);
        root.slope_in = n1 * inward;
        root.third = profile_.third_derivative(cell, z_t);
        return turning_part(cell, root, boundary, reach) ? boundary : not_a_number;
    }

    // The same for a turning cell's table (SnellCellTables::build_turn) where the cell's low end
    // z_m is a minimum of n with n′ = 0 and ξ = n(z_m) + ρ: the turning point and the expansion
    // about it come from the cubic's expansion about z_m in δ = distance from z_m, solved by
    // Newton in δ itself, so that they are exact for this ρ (a turning depth rounded to an ulp of
    // z would move x by about ulp(z)/δ relative, 1e-8 where δ is 1e-5 m).
    bool turning_beside_minimum(std::size_t cell, double z_m, double z_high, double rho) {
        if (failed_ || !profile_.is_cubic(cell) || !(rho > 0.0)) return false;
        const int inward = z_high > z_m ? 1 : -1;
        const double span = (z_high - z_m) * inward;
        double n, n1, n2;
        profile_.evaluate(cell, z_m, n, n1, n2);
        const double slope = n1 * inward, half_curvature = 0.5 * n2;
        const double sixth_third = inward * profile_.third_derivative(cell, z_m) / 6.0;
        if (!(half_curvature > 0.0)) return false;
        // n − ξ = slope·δ + n″δ²/2 + n‴δ³/6 − ρ, growing in δ up to the turning point.
        // Newton from √(ρ/(n″/2)), converging quadratically: one more step once the step is
        // below 1e-9 of δ leaves δ to rounding.
        double delta = std::sqrt(rho / half_curvature);
        int final_steps = -1;
        for (int iteration = 0; iteration < 60 && final_steps != 0; ++iteration) {
            const double gap = delta * (slope + delta * (half_curvature + delta * sixth_third)) - rho;
            const double growth = slope + delta * (2.0 * half_curvature + 3.0 * delta * sixth_third);
            if (!(growth > 0.0)) return false;
            const double step = gap / growth;
            delta -= step;
            if (final_steps > 0) --final_steps;
            else if (final_steps < 0 && std::abs(step) <= 1e-9 * delta) final_steps = 1;
        }
        if (final_steps != 0 || !(delta > 0.0) || !(delta < span)) return false;
        TurningRoot root;
        root.inward = inward;
        root.z = z_m + inward * delta;
        root.n = xi_;
        root.slope_in = slope + delta * (2.0 * half_curvature + 3.0 * delta * sixth_third);
        root.curvature = 2.0 * half_curvature + 6.0 * delta * sixth_third;
        root.third = inward * 6.0 * sixth_third;
        return turning_part(cell, root, z_high, span - delta);
    }

    struct TurningRoot {
        int inward = 1;
        double z = 0.0, n = 0.0, slope_in = 0.0, curvature = 0.0, third = 0.0, d = 0.0;
    };

    // The panels of turning_next_to_double_root from the root to `boundary`, `reach` away.
    bool turning_part(std::size_t cell, TurningRoot& root, double boundary, double reach) {
        const int inward = root.inward;
        const double z_t = root.z;
        if (!(root.slope_in > 0.0) || !(root.curvature > 0.0)) return false;
        root.d = root.slope_in / root.curvature;
        // n must keep growing inward up to the boundary (h = 1/(n n′) finite): n′ is a quadratic
        // in δ, convex upward from δ = 0 or concave, so its signs at both ends settle it.
        double n_b, dn_b, d2n_b;
        profile_.evaluate(cell, boundary, n_b, dn_b, d2n_b);
        if (!(dn_b * inward > 0.0)) return false;
        // The third zero of (n − ξ)/δ = n′ + n″δ/2 + n‴δ²/6 (inward), at δ ≈ −3n″/n‴.
        const double third_inward = inward * root.third;
        const double beyond = third_inward < 0.0 ? -3.0 * root.curvature / third_inward : infinity;
        if (!(beyond > reach)) return false;
        double x = 0.0, optical = 0.0, length = 0.0, attenuation = 0.0, by_parts_q = 0.0, by_parts_inverse = 0.0;
        const double sixth = third_inward / 6.0;
        const GaussRule& r = rule(16);
        // τ = acosh(1 + δ/d), as 2 asinh(√(δ/2d)) so that small δ/d keeps its digits.
        auto tau_of = [&](double delta) { return 2.0 * std::asinh(std::sqrt(0.5 * delta / root.d)); };
        SinhCoshNodes at_nodes;  // of τ/2
        graded_panels(tau_of(reach), tau_of(beyond), [&](double a, double b) {
            const double centre = 0.5 * (a + b), half = 0.5 * (b - a);
            at_nodes.panel(0.5 * centre, 0.5 * half);
            for (std::size_t i = 0; i < r.nodes.size(); ++i) {
                const double sinh_half = at_nodes.sinh_t[i], cosh_half = at_nodes.cosh_t[i];
                const double delta = 2.0 * root.d * sinh_half * sinh_half;  // d (cosh τ − 1), no cancellation
                const double w = half * r.weights[i] * root.d * 2.0 * sinh_half * cosh_half;  // d sinh τ dτ
                const double gz = delta * (root.slope_in + delta * (0.5 * root.curvature + delta * sixth));
                const double nz = root.n + gz;
                const double q2 = gz * (nz + xi_), q = std::sqrt(q2), inverse_q = 1.0 / q;
                x += w * xi_ * inverse_q;
                if (with_time_) {
                    optical += w * nz * nz * inverse_q;
                    length += w * nz * inverse_q;
                    if (attenuation_) attenuation += w * nz * inverse_q / attenuation_->length_m(z_t + inward * delta);
                }
                if (with_derivative_) {
                    // dn/dz and d²n/dz² at the node, from the same expansion about z_t.
                    const double dn = inward * (root.slope_in + delta * (root.curvature + 3.0 * sixth * delta));
                    const double d2n = root.curvature + third_inward * delta;
                    const double nn = nz * dn;
                    const double h_prime = -(dn * dn + nz * d2n) / (nn * nn);
                    by_parts_q += w * q * h_prime;
                    by_parts_inverse += w * h_prime * inverse_q;
                }
            }
        });
        sums_.x += x;
        sums_.optical += optical;
        sums_.length += length;
        sums_.attenuation += attenuation;
        if (with_derivative_) {
            // As in end_piece: x = −ξ h_b Q_b − ξ ∫ Q h′ dz (b: the far end of the part).
            const double g_b = reach * (root.slope_in + reach * (0.5 * root.curvature + reach * sixth));
            const double q_b = std::sqrt(g_b * (n_b + xi_)), h_b = 1.0 / (n_b * dn_b);
            const double orientation = -inward;
            const double signed_derivative =
                -q_b * h_b + xi_ * xi_ * h_b / q_b + orientation * (-by_parts_q + xi_ * xi_ * by_parts_inverse);
            sums_.derivative += orientation * signed_derivative;
        }
        return true;
    }

    // Everything from the middle of the leg between its end pieces, cell by cell; runs of whole
    // cells from the tables where they have them.
    void middle(double low, double high) {
        if (!(high > low)) return;
        const std::size_t count = profile_.cell_count();
        std::size_t last_whole = count;  // the deepest cell inside [low, high] (count: none)
        if (table_levels_ > 0) {
            const std::size_t c = cell_at(low, 1);
            if (profile_.cell_bottom(c) == low) last_whole = c;
            else if (c > 0) last_whole = c - 1;
        }
        for (std::size_t cell = cell_at(high, -1); cell < count;) {
            const bool last = cell + 1 == count;
            const double top = std::min(high, profile_.cell_top(cell));
            const double bottom = last ? low : std::max(low, profile_.cell_bottom(cell));
            if (last_whole < count && cell <= last_whole && top == profile_.cell_top(cell) &&
                bottom == profile_.cell_bottom(cell)) {
                const std::size_t done = from_tables(cell, last_whole);
                if (done > 0) {
                    cell += done;
                    if (cell > last_whole && profile_.cell_bottom(cell - 1) <= low) break;
                    continue;
                }
            }
            regular(cell, bottom, top);
            if (last || bottom <= low) break;
            ++cell;
        }
    }

    // The largest block starting at `cell` and ending at or above last_whole that has a table for
    // this ξ, added to the sums; the number of cells it covers (0: none, integrate directly).
    std::size_t from_tables(std::size_t cell, std::size_t last_whole) {
        if (failed_) return 0;
        SnellCellTables& tables = this->tables();
        // None longer than the run (2^L cells for level L), but for the last blocks of each level,
        // cut short at the profile's last cell; aligned blocks of level L start at multiples of
        // 2^L: none above the lowest set bit of `cell`.
        std::size_t top_level = std::min(table_levels_, tables.levels.size());
        if (last_whole + 1 < profile_.cell_count())
            top_level = std::min(top_level, static_cast<std::size_t>(std::bit_width(last_whole - cell + 1)));
        if (cell != 0 && (!tables.every_offset || aligned_blocks_))
            top_level = std::min(top_level, static_cast<std::size_t>(std::countr_zero(cell)) + 1);
        for (std::size_t level = top_level; level-- > 0;) {
            const SnellCellTables::Block& block = tables.block_at(level, cell);
            if (block.last_cell > last_whole) continue;
            if (add_block(tables, level, block)) return block.last_cell - block.first_cell + 1;
        }
        return 0;
    }

    // The part of a turning end's cell from the turning point to the cell's end where n is largest,
    // from the cell's table, when the leg goes on beyond that end (inward: +1 up, −1 down from the
    // turning end). False where there is no table for it (integrate directly).
    bool turning_cell(std::size_t cell, int inward, double other_end_z, std::size_t other_end_cell) {
        if (table_levels_ == 0 || failed_) return false;
        SnellCellTables& tables = this->tables();
        const SnellCellTables::TurnCell& turn = tables.turn_cells[cell];
        if (!turn.tabulated) return false;
        const bool high_is_top = turn.z_high == profile_.cell_top(cell);
        if (high_is_top != (inward > 0)) return false;
        // The other end (and its end piece, which stays in its own cell) beyond this cell.
        if (!(inward > 0 ? other_end_z > turn.z_high && other_end_cell < cell
                         : other_end_z < turn.z_high && other_end_cell > cell))
            return false;
        const double sigma = profile_.gap_in_cell(level_, cell, turn.z_high, turn.n_high);
        const double rho = -profile_.gap_in_cell(level_, cell, turn.z_low, turn.n_low);
        if (!(sigma > 0.0) || !(rho > 0.0)) return false;
        double variable = 0.0;
        const SnellCellTables::Piece* piece = tables.turn_piece(profile_, cell, sigma, rho, variable);
        if (!piece) return false;
        add_series(*piece, (2.0 * variable - (piece->w_low + piece->w_high)) / (piece->w_high - piece->w_low),
                   std::sqrt(sigma));
        return true;
    }

    bool add_block(SnellCellTables& tables, std::size_t level, const SnellCellTables::Block& block) {
        if (!block.tabulated) return false;
        const double w_squared = profile_.gap_in_cell(level_, block.cell_min, block.z_min, block.n_min);
        if (!(w_squared > 0.0)) return false;
        const SnellCellTables::Piece* piece = tables.piece(profile_, level, block, w_squared);
        if (!piece) return false;
        const double w = std::sqrt(w_squared);
        add_series(*piece, (2.0 * w - (piece->w_low + piece->w_high)) / (piece->w_high - piece->w_low), w);
        return true;
    }

    // A piece's four series at t in [−1, 1] added to the sums; the last one is divided by `scale`.
    void add_series(const SnellCellTables::Piece& piece, double t, double scale) {
        // Clenshaw's recurrence for the series needed, two side by side in each register (GCC's
        // vector extension, also Clang's: the same operations per lane as the scalar recurrence,
        // so the same sums to the bit, in half the instructions).
        using Pair = double __attribute__((vector_size(16)));
        const double two_t = 2.0 * t;
        const double (&c)[SnellCellTables::nodes][4] = piece.coefficients;
        // The pair of coefficients of degree m in slots `slot` and slot + 1, in one load.
        auto pair_at = [&](int m, int slot) {
            Pair pair;
            std::memcpy(&pair, &c[m][slot], sizeof pair);
            return pair;
        };
        Pair xd1 = {0.0, 0.0}, xd2 = {0.0, 0.0};  // x and ∂x/∂ξ
        if (with_time_) {
            Pair ol1 = {0.0, 0.0}, ol2 = {0.0, 0.0};  // optical path and length
            for (int m = SnellCellTables::degree; m >= 1; --m) {
                const Pair xd0 = two_t * xd1 - xd2 + pair_at(m, 0);
                const Pair ol0 = two_t * ol1 - ol2 + pair_at(m, 2);
                xd2 = xd1, xd1 = xd0, ol2 = ol1, ol1 = ol0;
            }
            sums_.optical += t * ol1[0] - ol2[0] + c[0][2];
            sums_.length += t * ol1[1] - ol2[1] + c[0][3];
        } else {
            for (int m = SnellCellTables::degree; m >= 1; --m) {
                const Pair xd0 = two_t * xd1 - xd2 + pair_at(m, 0);
                xd2 = xd1, xd1 = xd0;
            }
        }
        sums_.x += xi_ * (t * xd1[0] - xd2[0] + c[0][0]);
        if (with_derivative_) sums_.derivative += (t * xd1[1] - xd2[1] + c[0][1]) / scale;
    }

    struct EndPiece {
        bool used = false;
        double length = 0.0;
    };

    // How much of the leg next to one end is integrated in u (z = root ± u²).
    EndPiece plan_end(double z_end, LegEnd kind, int inward, double available, std::size_t& cell, double& g0,
                      double& slope_in, bool& double_root) {
        cell = cell_at(z_end, inward);
        // An end within rounding of the cell's far boundary (a turning point found just beside a
        // knot) takes the next cell's formula, continued over that sliver.
        const double room = inward > 0 ? profile_.cell_top(cell) - z_end : z_end - profile_.cell_bottom(cell);
        const std::size_t next = inward > 0 ? cell - 1 : cell + 1;
        if (room <= 1e-9 * std::max(1.0, std::abs(z_end)) && next < profile_.cell_count()) cell = next;
        double n, dn, d2n;
        profile_.evaluate(cell, z_end, n, dn, d2n);
        slope_in = dn * inward;
        double_root = false;
        const double cell_room = std::max(0.0, inward > 0 ? profile_.cell_top(cell) - z_end : z_end - profile_.cell_bottom(cell));
        EndPiece piece;
        if (kind == LegEnd::turning) {
            g0 = 0.0;
            if (!(slope_in > 0.0)) {
                double_root = true;
                return piece;
            }
        } else {
            g0 = std::max(0.0, profile_.gap_in_cell(level_, cell, z_end, n));
            if (!(slope_in > 0.0)) return piece;  // n does not fall toward a root beyond this end
            // The root beyond the end no nearer than the piece could reach (the rest of the cell
            // or half the leg): no piece, whatever its length.
            if (!(g0 / slope_in < std::min(available, cell_room))) return piece;
        }
        const double q1 = 2.0 * n * dn, q2 = 2.0 * (dn * dn + n * d2n);
        double curvature_length = q2 == 0.0 ? infinity : std::abs(q1 / q2);
        // Also well short of where n′ may vanish (a zero of n′ + n″δ + n‴δ²/2 lies at least
        // min(|n′/n″|, √|2n′/n‴|)/2 away, Fujiwara's bound): the ξ-derivative over the piece is
        // taken by parts through h = 1/(n n′), which has a pole there. Near an inflection point n″
        // alone would not see it (a cell between a minimum and a maximum of n).
        const double third = profile_.third_derivative(cell, z_end);
        if (third != 0.0)
            curvature_length = std::min(curvature_length, std::sqrt(std::abs(2.0 * dn / third)));
        piece.length = std::min({available, 0.125 * curvature_length, cell_room});
        const double virtual_root_distance = g0 / slope_in;
        piece.used = piece.length > 0.0 && (kind == LegEnd::turning || virtual_root_distance < piece.length);
        return piece;
    }

    // ∫ over the end piece in u, one 16-point Gauss–Legendre panel. The end is at z_end, the root
    // (n = ξ, real or extrapolated) at distance e = g0/slope_in beyond it; u runs from √e to
    // √(e + length). x, c·T and s are smooth in u. ∂x/∂ξ is taken by parts (ξ/Q = ξ h dQ/dz,
    // h = 1/(n n′)): with z_m the piece's far end,
    //   ∂/∂ξ ∫_{z_m}^{z_e} ξ/Q dz = [h Q − ξ² h/Q]_{z_m}^{z_e} − ∫ Q h′ dz + ξ² ∫ h′/Q dz,
    // whose integrands are smooth in u too (∫ n²/Q³ dz itself goes like 1/u² next to a root just
    // beyond a fixed end, and would need panels shrinking toward it). At a turning end the terms
    // at z_e are left out: Q = 0 there, and the end moving with ξ cancels the singular one (the
    // total derivative). At a fixed end where n = ξ to the last bit, ∂x/∂ξ is infinite.
    void end_piece(double z_end, LegEnd kind, int inward, std::size_t cell, double g0, double slope_in, double length) {
        if (failed_) return;
        const double e = kind == LegEnd::turning ? 0.0 : g0 / slope_in;
        const double u0 = std::sqrt(e), u1 = std::sqrt(e + length);
        const GaussRule& r = rule(16);
        double by_parts_q = 0.0, by_parts_inverse = 0.0;  // ∫ Q h′ |dz| and ∫ h′/Q |dz|
        const double centre = 0.5 * (u0 + u1), half = 0.5 * (u1 - u0);
        for (std::size_t i = 0; i < r.nodes.size(); ++i) {
            const double u = centre + half * r.nodes[i], w = half * r.weights[i];
            const double rise = (u - u0) * (u + u0);  // u² − e: distance from the end, exactly
            const double z = z_end + inward * rise;
            double n, dn, d2n;
            profile_.evaluate(cell, z, n, dn, d2n);
            const double difference = profile_.divided_difference(cell, z, z_end) * inward;  // d(n)/d(rise)
            const double gap_over_u2 = (g0 + difference * rise) / (u * u);
            const double k = std::sqrt((kind == LegEnd::turning ? difference : gap_over_u2) * (n + xi_));  // Q/u
            sums_.x += w * 2.0 * xi_ / k;
            if (with_time_) {
                sums_.optical += w * 2.0 * n * n / k;
                sums_.length += w * 2.0 * n / k;
                if (attenuation_) sums_.attenuation += w * 2.0 * n / (k * attenuation_->length_m(z));
            }
            if (with_derivative_) {
                const double nn = n * dn;
                const double h_prime = -(dn * dn + n * d2n) / (nn * nn);
                by_parts_q += w * 2.0 * u * u * k * h_prime;
                by_parts_inverse += w * 2.0 * h_prime / k;
            }
        }
        if (!with_derivative_) return;
        if (kind == LegEnd::fixed && u0 == 0.0) {
            sums_.derivative = infinity;
            return;
        }
        const double z_m = z_end + inward * length;
        double n, dn, d2n;
        profile_.evaluate(cell, z_m, n, dn, d2n);
        const double g_m = g0 + profile_.divided_difference(cell, z_m, z_end) * (z_m - z_end);
        const double q_m = std::sqrt(g_m * (n + xi_)), h_m = 1.0 / (n * dn);
        const double orientation = -inward;  // sign of z_e − z_m
        double signed_derivative =
            -q_m * h_m + xi_ * xi_ * h_m / q_m + orientation * (-by_parts_q + xi_ * xi_ * by_parts_inverse);
        if (kind == LegEnd::fixed) {
            profile_.evaluate(cell, z_end, n, dn, d2n);
            const double q_e = std::sqrt(g0 * (n + xi_)), h_e = 1.0 / (n * dn);
            signed_derivative += q_e * h_e - xi_ * xi_ * h_e / q_e;
        }
        sums_.derivative += orientation * signed_derivative;
    }

    Sums& sums() { return sums_; }

    // The sums as a leg's integrals (attenuation: the profile the time and length were taken with,
    // or null; uniform: its length where constant).
    LegIntegrals result(const AttenuationProfile* attenuation, std::optional<double> uniform) const {
        LegIntegrals out;
        out.distance_m = sums_.x;
        out.optical_path_m = sums_.optical;
        out.length_m = sums_.length;
        if (attenuation) out.attenuation_exponent = uniform ? sums_.length / *uniform : sums_.attenuation;
        out.distance_derivative = with_derivative_ ? sums_.derivative : std::numeric_limits<double>::quiet_NaN();
        return out;
    }

private:
    // ξ reaches n inside the leg (not a leg of one interval, or ξ within rounding of a local
    // minimum of n passed over), or the panels needed exceed any reasonable count: the leg is
    // taken as infinitely long, the limit it approaches.
    void fail() {
        failed_ = true;
        sums_.x = sums_.optical = sums_.length = sums_.attenuation = infinity;
        sums_.derivative = std::numeric_limits<double>::quiet_NaN();
    }
    static constexpr int max_panels = 4000;
    bool failed_ = false;
    int panels_ = 0;

    const StratifiedProfile& profile_;
    const RayLevel& level_;
    double xi_;
    bool with_time_, with_derivative_;
    const AttenuationProfile* attenuation_;
    std::size_t table_levels_;
    bool aligned_blocks_;
    SnellCellTables* tables_ = nullptr;  // fetched on first use
    // StratifiedProfile::cell_at for the leg's two ends, looked up by plan_end and again by middle.
    struct Located {
        double z = 0.0;
        int toward = 0;
        std::size_t cell = 0;
    };
    Located located_[2];
    std::size_t cell_at(double z, int toward) {
        Located& slot = located_[toward > 0 ? 0 : 1];
        if (slot.toward != toward || slot.z != z) slot = {z, toward, profile_.cell_at(z, toward)};
        return slot.cell;
    }
    SnellCellTables& tables() {
        if (!tables_) tables_ = &profile_.snell_cell_tables();
        return *tables_;
    }
    Sums sums_;
};

// Legs too short in z to be resolved from their ends' depths (a ray all but horizontal: turning
// within a few rounding errors of z, as near n_deep, or a duct of vanishing width), in the limit
// of a linear n − ξ (one turning end) or a parabolic one (two): from n − ξ at the fixed end, which
// RayLevel keeps accurate, and dn/dz (or d²n/dz²) there. The relative error is of the order of the
// height over the length on which n′ changes, below 1e-10 where this is used.
std::optional<LegIntegrals> horizontal_limit(const StratifiedProfile& profile, const RayLevel& level, LegEndpoint a,
                                             LegEndpoint b) {
    const int turning_ends = (a.kind == LegEnd::turning) + (b.kind == LegEnd::turning);
    if (turning_ends == 0) return std::nullopt;
    const double height = b.z - a.z;
    const LegEndpoint& fixed_end = a.kind == LegEnd::fixed ? a : b;
    const std::size_t cell = profile.cell_at(fixed_end.z, a.kind == LegEnd::fixed ? 1 : -1);
    double n, dn, d2n;
    profile.evaluate(cell, fixed_end.z, n, dn, d2n);
    const double xi = level.ray_parameter;
    // The length on which the linear (or parabolic) model of n stops holding: n′/n″, and also
    // √(n′/n‴) and n/n′, because n″ alone vanishes at an inflection point inside a cell (the middle
    // of a table's piece between a maximum and a minimum), where it would call every leg from there
    // "horizontal"; the cell's length when nothing else bounds it.
    const double third = profile.third_derivative(cell, fixed_end.z);
    double variation_length = dn == 0.0 ? infinity : std::abs(n / dn);
    if (d2n != 0.0) variation_length = std::min(variation_length, std::abs(dn / d2n));
    if (third != 0.0) variation_length = std::min(variation_length, std::sqrt(std::abs(dn / third)));
    if (d2n == 0.0 && third == 0.0)
        variation_length = std::min(variation_length, profile.cell_top(cell) - profile.cell_bottom(cell));
    const double resolution = 256.0 * std::numeric_limits<double>::epsilon() * std::max(1.0, std::abs(fixed_end.z));
    if (height > std::max(resolution, 1e-10 * variation_length)) return std::nullopt;
    LegIntegrals out;
    if (turning_ends == 1) {
        const double g0 = std::max(0.0, profile.gap(level, fixed_end.z));
        if (dn == 0.0) return std::nullopt;
        // n − ξ = |n′| w at a distance w from the turning point: x = ξ √(2 g0 / n) / |n′|.
        out.distance_m = xi * std::sqrt(2.0 * g0 / n) / std::abs(dn);
        out.distance_derivative = g0 > 0.0 ? -out.distance_m / (2.0 * g0) : -infinity;
    } else {
        // n − ξ = A − |n″| w²/2 about the axis: half an oscillation of a harmonic ray, x = π ξ/√(n |n″|).
        if (d2n == 0.0) return std::nullopt;
        out.distance_m = pi * xi / std::sqrt(n * std::abs(d2n));
        out.distance_derivative = 0.0;
    }
    out.optical_path_m = n * n * out.distance_m / std::max(xi, std::numeric_limits<double>::min());
    out.length_m = n * out.distance_m / std::max(xi, std::numeric_limits<double>::min());
    return out;
}

void check_end(const StratifiedProfile& profile, double z) {
    if (!std::isfinite(z) || z > 0.0 || z < profile.floor_z())
        throw DataInputError(fmt::format("a leg end at z = {} m lies outside the ice of the profile ({} m to 0)",
                                         number_for_message(z), number_for_message(profile.floor_z())));
}

// table_levels: as for LegQuadrature.
LegIntegrals integrate_leg(const StratifiedProfile& profile, const RayLevel& level, LegEndpoint a, LegEndpoint b,
                           bool with_time_and_length, bool with_derivative, const AttenuationProfile* attenuation,
                           std::size_t table_levels, bool aligned_blocks = false) {
    // A uniform length needs no quadrature: the exponent is s/L.
    const std::optional<double> uniform = attenuation ? attenuation->constant_length_m() : std::nullopt;
    const AttenuationProfile* varying = uniform ? nullptr : attenuation;
    check_end(profile, a.z);
    check_end(profile, b.z);
    if (a.z > b.z) std::swap(a, b);
    LegIntegrals out;
    const double height = b.z - a.z;
    if (auto limit = horizontal_limit(profile, level, a, b)) {
        if (attenuation) limit->attenuation_exponent = limit->length_m / attenuation->length_m(b.z);
        return *limit;
    }
    if (height == 0.0) return out;
    LegQuadrature quadrature(profile, level, with_time_and_length, with_derivative, with_time_and_length ? varying : nullptr,
                             table_levels, aligned_blocks);
    // Each end may take at most half of the leg.
    std::size_t cell_low, cell_high;
    double g_low, g_high, slope_low, slope_high;
    bool double_low, double_high;
    const auto piece_low = quadrature.plan_end(a.z, a.kind, +1, 0.5 * height, cell_low, g_low, slope_low, double_low);
    const auto piece_high = quadrature.plan_end(b.z, b.kind, -1, 0.5 * height, cell_high, g_high, slope_high, double_high);
    if (double_low || double_high) {
        out.distance_m = out.optical_path_m = out.length_m = infinity;
        out.distance_derivative = std::numeric_limits<double>::quiet_NaN();
        return out;
    }
    double low = piece_low.used ? a.z + piece_low.length : a.z;
    double high = piece_high.used ? b.z - piece_high.length : b.z;
    // A turning end's cell from its table when the leg goes on beyond that cell (the other end's
    // piece then lies in its own cell, outside this one).
    // A part from a turning end next to a double root may cover the whole leg (reached: the other
    // end), where that end is fixed in the same cell and needs no end piece of its own.
    double reached = not_a_number;
    const LegEndpoint part_end_a = piece_high.used ? LegEndpoint{b.z, LegEnd::turning} : b;
    const LegEndpoint part_end_b = piece_low.used ? LegEndpoint{a.z, LegEnd::turning} : a;
    if (a.kind == LegEnd::turning && quadrature.turning_cell(cell_low, +1, b.z, cell_high)) {
        low = profile.cell_top(cell_low);
    } else if (a.kind == LegEnd::turning &&
               !std::isnan(reached = quadrature.turning_next_to_double_root(cell_low, a.z, +1, part_end_a))) {
        low = reached;
    } else if (piece_low.used) {
        quadrature.end_piece(a.z, a.kind, +1, cell_low, g_low, slope_low, piece_low.length);
    }
    if (low >= b.z) {
        // Done: the part from a reached b.
    } else if (b.kind == LegEnd::turning && quadrature.turning_cell(cell_high, -1, a.z, cell_low)) {
        high = profile.cell_bottom(cell_high);
    } else if (b.kind == LegEnd::turning &&
               !std::isnan(reached = quadrature.turning_next_to_double_root(cell_high, b.z, -1, part_end_b))) {
        high = reached;
    } else if (piece_high.used) {
        quadrature.end_piece(b.z, b.kind, -1, cell_high, g_high, slope_high, piece_high.length);
    }
    quadrature.middle(low, high);
    return quadrature.result(with_time_and_length ? attenuation : nullptr, uniform);
}

}  // namespace

LegIntegrals leg_integrals(const StratifiedProfile& profile, const RayLevel& level, LegEndpoint a, LegEndpoint b,
                           bool with_time_and_length, bool with_derivative, const AttenuationProfile* attenuation) {
    return integrate_leg(profile, level, a, b, with_time_and_length, with_derivative, attenuation,
                         std::numeric_limits<std::size_t>::max());
}

std::optional<LegIntegrals> leg_integrals_from_turning_cell(const StratifiedProfile& profile, const RayLevel& level,
                                                            double turning_z, double fixed_z, bool with_time_and_length,
                                                            bool with_derivative) {
    check_end(profile, fixed_z);
    const int inward = fixed_z > turning_z ? +1 : -1;  // from the turning end toward the fixed end
    LegQuadrature quadrature(profile, level, with_time_and_length, with_derivative, nullptr,
                             std::numeric_limits<std::size_t>::max());
    const std::size_t cell = profile.cell_at(turning_z), fixed_cell = profile.cell_at(fixed_z, -inward);
    if (!quadrature.turning_cell(cell, inward, fixed_z, fixed_cell)) return std::nullopt;
    // The rest as integrate_leg takes it: the fixed end's piece (up to half the leg, its height
    // taken from the cell's depth here), then the middle.
    double low = inward > 0 ? profile.cell_top(cell) : fixed_z, high = inward > 0 ? fixed_z : profile.cell_bottom(cell);
    std::size_t piece_cell;
    double g, slope;
    bool double_root;
    const auto piece = quadrature.plan_end(fixed_z, LegEnd::fixed, -inward, 0.5 * std::abs(fixed_z - turning_z), piece_cell,
                                           g, slope, double_root);
    if (piece.used) {
        quadrature.end_piece(fixed_z, LegEnd::fixed, -inward, piece_cell, g, slope, piece.length);
        (inward > 0 ? high : low) -= inward * piece.length;
    }
    quadrature.middle(low, high);
    return quadrature.result(nullptr, std::nullopt);
}

LegIntegrals leg_integrals_by_quadrature(const StratifiedProfile& profile, const RayLevel& level, LegEndpoint a,
                                         LegEndpoint b, bool with_time_and_length, bool with_derivative,
                                         const AttenuationProfile* attenuation) {
    return integrate_leg(profile, level, a, b, with_time_and_length, with_derivative, attenuation, 0);
}

std::shared_ptr<SnellCellTables> make_snell_cell_tables(const StratifiedProfile& profile) {
    auto tables = std::make_shared<SnellCellTables>();
    const std::size_t count = profile.cell_count();
    // n at every cell end and every end of a monotone run (the extrema), with a cell holding it.
    struct Knot {
        double z, n, slope;
        std::size_t cell;
    };
    std::vector<Knot> knots;
    std::vector<std::size_t> first_knot;  // knots of cell c: [first_knot[c], first_knot[c + 1])
    auto add_knot = [&](std::size_t cell, double z) {
        double n, dn, d2n;
        profile.evaluate(cell, z, n, dn, d2n);
        knots.push_back({z, n, dn, cell});
    };
    const auto& runs = profile.runs();  // from the surface down, like the cells
    std::size_t run = 0;
    for (std::size_t cell = 0; cell < count; ++cell) {
        first_knot.push_back(knots.size());
        add_knot(cell, profile.cell_top(cell));
        while (run < runs.size() && runs[run].z_bottom >= profile.cell_top(cell)) ++run;
        for (std::size_t j = run; j < runs.size() && runs[j].z_bottom > profile.cell_bottom(cell); ++j)
            add_knot(cell, runs[j].z_bottom);
        add_knot(cell, profile.cell_bottom(cell));
    }
    first_knot.push_back(knots.size());
    std::size_t total = 0;
    tables->every_offset = count <= SnellCellTables::max_every_offset;
    for (std::size_t size = 1, level = 0; size < 2 * count; size *= 2, ++level) {
        auto& blocks = tables->levels.emplace_back();
        for (std::size_t first = 0; first < count; first += tables->every_offset ? 1 : size) {
            SnellCellTables::Block& block = blocks.emplace_back();
            block.first_cell = first;
            block.last_cell = std::min(count, first + size) - 1;
            const double z_top = profile.cell_top(block.first_cell), z_bottom = profile.cell_bottom(block.last_cell);
            block.z_top = z_top;
            block.z_bottom = z_bottom;
            const Knot* begin = knots.data() + first_knot[block.first_cell];
            const Knot* end = knots.data() + first_knot[block.last_cell + 1];
            const Knot* lowest = nullptr;
            for (const Knot* k = begin; k != end; ++k)
                if (!lowest || k->n < lowest->n) lowest = k;
            if (!lowest || !(lowest->n > 0.0) || !std::isfinite(lowest->n)) continue;
            double gap = infinity;
            for (const Knot* k = begin; k != end; ++k)
                if (k->n - lowest->n > 0.0) gap = std::min(gap, k->n - lowest->n);
            // n all but constant on the block: x ≈ ξh/√(n² − ξ²) has its pole at w = 0 itself.
            if (!(gap > 1e-12 * lowest->n) || !std::isfinite(gap)) continue;
            block.tabulated = true;
            block.z_min = lowest->z;
            block.cell_min = lowest->cell;
            block.n_min = lowest->n;
            // A minimum inside the block, or one where n′ vanishes: a logarithm at w = 0.
            block.direct_base = (lowest->z < z_top && lowest->z > z_bottom) ||
                                std::abs(lowest->slope) <= 1e-12 * std::max(1.0, std::abs(lowest->n));
            block.w0_exponent = std::ilogb(0.25 * gap);
            // Pieces up to w² = N (ξ = 0).
            block.piece_count = static_cast<std::size_t>(std::max(0, std::ilogb(lowest->n) - block.w0_exponent)) + 2;
            block.piece_count += SnellCellTables::base_levels;
            block.first_piece = total;
            total += block.piece_count;
        }
        if (size >= count) break;
    }
    tables->turn_cells.resize(count);
    std::size_t turn_total = 0;
    for (std::size_t cell = 0; cell < count; ++cell) {
        // Monotone: its only knots are its two ends.
        if (first_knot[cell + 1] - first_knot[cell] != 2) continue;
        const Knot& top = knots[first_knot[cell]];
        const Knot& bottom = knots[first_knot[cell] + 1];
        SnellCellTables::TurnCell& turn = tables->turn_cells[cell];
        const bool high_is_top = top.n > bottom.n;
        turn.z_high = high_is_top ? top.z : bottom.z;
        turn.z_low = high_is_top ? bottom.z : top.z;
        turn.n_high = std::max(top.n, bottom.n);
        turn.n_low = std::min(top.n, bottom.n);
        const double low_slope = high_is_top ? bottom.slope : top.slope;
        turn.low_double_root = std::abs(low_slope) <= 1e-12 * std::max(1.0, std::abs(turn.n_low));
        if (!(turn.n_high - turn.n_low > 1e-12 * turn.n_high) || !(turn.n_low > 0.0) || !std::isfinite(turn.n_high)) continue;
        turn.tabulated = true;
        turn.first_piece = turn_total;
        turn_total += 2 * SnellCellTables::turn_levels;
    }
    tables->turn_piece_total = turn_total;
    tables->turn_pieces = std::make_unique<std::atomic<SnellCellTables::Piece*>[]>(turn_total);
    for (std::size_t i = 0; i < turn_total; ++i) tables->turn_pieces[i].store(nullptr, std::memory_order_relaxed);
    tables->piece_total = total;
    tables->pieces = std::make_unique<std::atomic<SnellCellTables::Piece*>[]>(total);
    for (std::size_t i = 0; i < total; ++i) tables->pieces[i].store(nullptr, std::memory_order_relaxed);
    return tables;
}

namespace {

// The piece in `slot`, built by `build` on first use. Two threads may build the same piece; the
// first to publish it wins and the other's is dropped.
template <class Piece, class Build>
Piece* published(std::atomic<Piece*>& slot, Build build) {
    Piece* found = slot.load(std::memory_order_acquire);
    if (found) return found;
    std::unique_ptr<Piece> fresh = build();
    Piece* expected = nullptr;
    if (slot.compare_exchange_strong(expected, fresh.get(), std::memory_order_acq_rel, std::memory_order_acquire))
        return fresh.release();
    return expected;
}

}  // namespace

const SnellCellTables::Piece* SnellCellTables::piece_in(const StratifiedProfile& profile, std::size_t level,
                                                        const Block& block, double w_squared,
                                                        std::atomic<Piece*>* slots) {
    const int above_base = exponent_of(w_squared) - block.w0_exponent;
    std::size_t index = above_base < 0 ? 0 : static_cast<std::size_t>(above_base) + 1;
    if (index >= block.piece_count - base_levels) return nullptr;
    if (index == 0) {
        if (!block.direct_base) {
            const Piece* whole = published(slots[0], [&] { return build(profile, level, block, 0); });
            if (whole->tabulated) return whole;
        }
        // w² in [w0² 2^(−k−1), w0² 2^(−k)): ilogb(w²) = w0_exponent − k − 1.
        const int k = -above_base - 1;
        if (k >= base_levels) return nullptr;
        index = base_slot(block, k);
    }
    const Piece* found = published(slots[index], [&] { return build(profile, level, block, index); });
    return found->tabulated ? found : nullptr;
}

std::unique_ptr<SnellCellTables::Piece> SnellCellTables::build(const StratifiedProfile& profile, std::size_t level,
                                                               const Block& block, std::size_t index) {
    auto piece = std::make_unique<Piece>();
    const double w0_squared = std::ldexp(1.0, block.w0_exponent);
    if (index >= base_slot(block, 0)) {
        const int k = static_cast<int>(index - base_slot(block, 0));
        piece->w_low = std::sqrt(std::ldexp(w0_squared, -k - 1));
        piece->w_high = std::sqrt(std::ldexp(w0_squared, -k));
    } else {
        piece->w_low = index == 0 ? 0.0 : std::sqrt(std::ldexp(w0_squared, static_cast<int>(index) - 1));
        // The last piece ends at ξ = 0 (beyond, n + ξ vanishes at w² = N + n).
        piece->w_high = std::sqrt(std::min(std::ldexp(w0_squared, static_cast<int>(index)), block.n_min));
    }
    if (!(piece->w_high > piece->w_low)) return piece;
    // The four integrals of the whole block at w, for a level anchored at z_min in the cell that
    // holds it (so that n − ξ there is w² exactly): by quadrature for a cell, else from the
    // blocks of the levels below.
    auto direct = [&](double w, double out[4]) {
        RayLevel ray;
        ray.anchored = true;
        ray.anchor_z = block.z_min;
        ray.offset = w * w;
        ray.anchor_cell = block.cell_min;
        ray.anchor_index = block.n_min;
        ray.ray_parameter = block.n_min - w * w;
        const LegIntegrals whole =
            integrate_leg(profile, ray, {block.z_bottom}, {block.z_top}, true, true, nullptr, level, true);
        out[0] = whole.distance_m / ray.ray_parameter;  // x/ξ, so that x is 0 at ξ = 0 exactly
        out[1] = whole.optical_path_m;
        out[2] = whole.length_m;
        out[3] = w * whole.distance_derivative;
        return std::isfinite(out[0]) && std::isfinite(out[1]) && std::isfinite(out[2]) && std::isfinite(out[3]);
    };
    fit(*piece, direct);
    return piece;
}

template <class Values>
bool SnellCellTables::fit(Piece& piece, const Values& values_at) {
    const double centre = 0.5 * (piece.w_high + piece.w_low), half = 0.5 * (piece.w_high - piece.w_low);
    static const auto cosines = [] {
        std::array<std::array<double, nodes>, nodes> table{};
        for (int m = 0; m < nodes; ++m)
            for (int k = 0; k < nodes; ++k) table[m][k] = std::cos(pi * m * (k + 0.5) / nodes);
        return table;
    }();
    // x, c·T and s to the quadrature's own rounding; the derivative to 1e-10, because with a
    // turning end the quadrature's by-parts sum scatters by more than 1e-13 from one ξ to the next.
    constexpr double tolerance[4] = {1e-13, 1e-13, 1e-13, 1e-10};
    double values[nodes][4];
    for (int k = 0; k < nodes; ++k)
        if (!values_at(centre + half * cosines[1][k], values[k])) return false;
    for (int series = 0; series < 4; ++series) {
        double magnitude = 0.0;
        for (int m = 0; m < nodes; ++m) {
            double sum = 0.0;
            for (int k = 0; k < nodes; ++k) sum += values[k][series] * cosines[m][k];
            piece.coefficient(series, m) = (m == 0 ? 1.0 : 2.0) * sum / nodes;
            magnitude += std::abs(piece.coefficient(series, m));
        }
        // Converged: the last two coefficients small enough.
        const double tail = std::abs(piece.coefficient(series, degree - 1)) + std::abs(piece.coefficient(series, degree));
        if (!(tail <= tolerance[series] * magnitude)) return false;
    }
    // Two points between the nodes against what the piece was built from.
    for (double t : {0.3, -0.63}) {
        double check[4];
        if (!values_at(centre + half * t, check)) return false;
        for (int series = 0; series < 4; ++series) {
            double b1 = 0.0, b2 = 0.0;
            for (int m = degree; m >= 1; --m) {
                const double b0 = 2.0 * t * b1 - b2 + piece.coefficient(series, m);
                b2 = b1;
                b1 = b0;
            }
            const double value = t * b1 - b2 + piece.coefficient(series, 0);
            if (!(std::abs(value - check[series]) <= tolerance[series] * std::abs(check[series]))) return false;
        }
    }
    piece.tabulated = true;
    return true;
}

const SnellCellTables::Piece* SnellCellTables::turn_piece(const StratifiedProfile& profile, std::size_t cell,
                                                          double sigma, double rho, double& variable) {
    const TurnCell& turn = turn_cells[cell];
    const double range = turn.n_high - turn.n_low;
    const bool near_high = sigma <= rho;
    const int level = std::max(0, std::ilogb(range / (near_high ? sigma : rho)) - 1);
    if (level >= turn_levels) return nullptr;
    const std::size_t index = static_cast<std::size_t>(near_high ? level : turn_levels + level);
    variable = std::log(near_high ? sigma : rho);
    const Piece* found =
        published(turn_pieces[turn.first_piece + index], [&] { return build_turn(profile, cell, turn, index); });
    return found->tabulated ? found : nullptr;
}

std::unique_ptr<SnellCellTables::Piece> SnellCellTables::build_turn(const StratifiedProfile& profile, std::size_t cell,
                                                                    const TurnCell& turn, std::size_t index) {
    auto piece = std::make_unique<Piece>();
    const double range = turn.n_high - turn.n_low;
    const bool near_high = index < static_cast<std::size_t>(turn_levels);
    const int level = static_cast<int>(near_high ? index : index - turn_levels);
    const double from = std::ldexp(range, -level - 2), to = std::ldexp(range, -level - 1);
    piece->w_low = std::log(from);
    piece->w_high = std::log(to);
    // The integrals from the turning point to the high end at one value of the piece's variable,
    // for a level anchored at the nearer end of the cell (so that σ or ρ is exact there).
    auto direct = [&](double variable, double out[4]) {
        const double distance = std::exp(variable);  // σ or ρ
        const double sigma = near_high ? distance : range - distance;
        RayLevel ray;
        ray.anchored = true;
        ray.anchor_cell = cell;
        if (near_high) {
            ray.anchor_z = turn.z_high, ray.anchor_index = turn.n_high, ray.offset = sigma;
        } else {
            ray.anchor_z = turn.z_low, ray.anchor_index = turn.n_low, ray.offset = -distance;
        }
        ray.ray_parameter = ray.anchor_index - ray.offset;
        // Toward a low end where n′ = 0, from the expansion about it where that applies (n″ > 0
        // from the turning point on), else as below.
        if (!near_high && turn.low_double_root) {
            LegQuadrature quadrature(profile, ray, true, true, nullptr, 0);
            if (quadrature.turning_beside_minimum(cell, turn.z_low, turn.z_high, distance)) {
                const Sums& part = quadrature.sums();
                out[0] = part.x / ray.ray_parameter;
                out[1] = part.optical;
                out[2] = part.length;
                out[3] = std::sqrt(sigma) * part.derivative;
                return std::isfinite(out[0]) && std::isfinite(out[1]) && std::isfinite(out[2]) && std::isfinite(out[3]);
            }
        }
        auto gap = [&](double z) {
            double n, dn, d2n;
            profile.evaluate(cell, z, n, dn, d2n);
            return profile.gap_in_cell(ray, cell, z, n);
        };
        const double g_high = gap(turn.z_high), g_low = gap(turn.z_low);
        if (!(g_high > 0.0) || !(g_low < 0.0)) return false;
        std::uintmax_t iterations = 200;
        auto tolerance = [](double lo, double hi) {
            return std::abs(hi - lo) <= 4.0 * std::numeric_limits<double>::epsilon() * std::max(std::abs(lo), std::abs(hi));
        };
        const bool low_first = turn.z_low < turn.z_high;  // toms748 wants the bracket in order
        const auto bracket = boost::math::tools::toms748_solve(gap, low_first ? turn.z_low : turn.z_high,
                                                               low_first ? turn.z_high : turn.z_low,
                                                               low_first ? g_low : g_high, low_first ? g_high : g_low,
                                                               tolerance, iterations);
        const double z_turn = std::abs(gap(bracket.first)) <= std::abs(gap(bracket.second)) ? bracket.first : bracket.second;
        const LegIntegrals part =
            integrate_leg(profile, ray, {z_turn, LegEnd::turning}, {turn.z_high}, true, true, nullptr, 0);
        out[0] = part.distance_m / ray.ray_parameter;
        out[1] = part.optical_path_m;
        out[2] = part.length_m;
        out[3] = std::sqrt(sigma) * part.distance_derivative;
        return std::isfinite(out[0]) && std::isfinite(out[1]) && std::isfinite(out[2]) && std::isfinite(out[3]);
    };
    fit(*piece, direct);
    return piece;
}

}  // namespace firnray

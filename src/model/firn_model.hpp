// A complete site model: the ice index profile plus what lies above and below it and how
// the ice absorbs. This is what model files load into and what every solver takes.
#pragma once

#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "core/errors.hpp"

#include "model/index_profile.hpp"

namespace firnray {

// Field attenuation in the ice: the field factor along a path is exp(-∫ ds / L(z)).
class AttenuationProfile {
public:
    virtual ~AttenuationProfile() = default;
    // Attenuation length L (m) of the field at z <= 0.
    virtual double length_m(double z) const = 0;
    // The length when it is the same at every depth, so that solvers can use s / L instead of a
    // quadrature; empty (the default) for a length that varies with depth.
    virtual std::optional<double> constant_length_m() const { return std::nullopt; }
    // "constant" or "table" for the kinds model files hold (model/profile_kinds.hpp); empty for a
    // profile made in code that no model file can express.
    virtual std::string kind() const { return ""; }
    virtual std::string describe() const = 0;
};

// A reflecting bottom (bedrock, or sea water under a shelf) at z = bottom_z_m < 0.
struct Bottom {
    double z_m = 0.0;                  // negative
    double power_reflectivity = 1.0;   // |r|^2 in [0, 1]; the field factor is its square root
};

// Something merely unusual in a model file (not an error): the front end shows it as
// "warning: FILE:LINE:COLUMN: ..." on stderr and goes on.
struct ModelWarning {
    std::string message;
    InputLocation where;
    std::string describe() const {
        const std::string place = where.describe();
        return place.empty() ? message : place + ": " + message;
    }
};

// What is known of how uncertain a model is (docs/uncertainty.md): the covariance of some of its
// profile's parameters (named as in model/model_parameters.hpp), and, for a table profile, a 1σ
// of n at each point with a correlation length. Model files hold it in [uncertainty].
struct ParameterCovariance {
    std::vector<std::string> names;           // parameters of the profile, no repeats
    std::vector<std::vector<double>> matrix;  // names.size() square, symmetric positive semi-definite
};

struct IndexUncertainty {
    std::vector<double> sigma_n;        // 1σ of n at each point of the table, in its order
    double correlation_length_m = 0.0;  // points d apart correlate as exp(-d²/(2ℓ²)); 0: independent
};

struct ModelUncertainty {
    std::optional<ParameterCovariance> parameters;
    std::optional<IndexUncertainty> index;  // table profiles only
    InputLocation where;                    // the [uncertainty] table, for messages
};

struct FirnModel {
    std::string name;                               // from the file, or the built-in name
    std::string origin;                             // file path, or "built-in"
    std::shared_ptr<const IndexProfile> index;      // never null
    double n_air = 1.0;
    std::optional<Bottom> bottom;
    std::shared_ptr<const AttenuationProfile> attenuation;  // null: no attenuation (factor 1)
    std::vector<ModelWarning> warnings;             // from the file; empty for a model made in code
    std::optional<ModelUncertainty> uncertainty;    // from [uncertainty]; none: the model is taken as exact

    // n at z: the profile in the ice (z <= 0), n_air above.
    double index_at(double z) const { return z > 0.0 ? n_air : index->index(z); }
};

}  // namespace firnray

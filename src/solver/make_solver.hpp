// Choosing a solver for a model: the closed form where it applies (exponential profiles), the
// numeric integrator otherwise, or either one on request so that the two can be compared.
#pragma once

#include <memory>
#include <string>

#include "solver/ray_solver.hpp"

namespace firnray {

enum class SolverChoice { automatic, closed, numeric };

// "auto", "closed" or "numeric"; throws DataInputError otherwise.
SolverChoice parse_solver_choice(const std::string& text);

// closed on a non-exponential model throws ModelInputError saying why.
std::unique_ptr<RaySolver> make_solver(std::shared_ptr<const FirnModel> model, SolverChoice choice);

}  // namespace firnray

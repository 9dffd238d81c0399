// Choosing a solver for a model: the closed form where it applies (exponential and constant
// profiles), the stratified quadrature for every other profile, or any one of them on request so
// that they can be compared.
#pragma once

#include <memory>
#include <string>

#include "solver/ray_solver.hpp"

namespace firnray {

enum class SolverChoice { automatic, closed, numeric, stratified };

// "auto", "closed", "numeric" or "stratified"; throws DataInputError otherwise.
SolverChoice parse_solver_choice(const std::string& text);

// auto: the closed form for exponential and constant profiles, the stratified solver for every
// other kind. closed on a profile of another kind throws ModelInputError saying why; so does
// numeric on a profile whose index falls with depth somewhere (the integrator follows a ray
// between two depths only where n grows with depth; the message names the model and the depth of
// the first inversion). numeric_tolerance, when positive, sets the numeric solver's per-step
// relative and absolute (m) tolerances; 0 keeps its defaults (IntegrationTolerances).
// Whatever the choice, find_paths hands some ice-to-ice pairs to the stratified path finder
// (paths/find_paths.hpp, uses_stratified_paths).
std::unique_ptr<RaySolver> make_solver(std::shared_ptr<const FirnModel> model, SolverChoice choice,
                                       double numeric_tolerance = 0.0);

}  // namespace firnray

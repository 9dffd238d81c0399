#include "core/cancel.hpp"

#include "core/errors.hpp"

namespace firnray {

void RunControl::throw_if_cancelled() const {
    if (cancelled()) throw Cancelled();
}

}  // namespace firnray

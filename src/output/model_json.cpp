#include "output/model_json.hpp"

#include "model/table_profile.hpp"

namespace firnray {

void write_model_json(JsonWriter& json, const FirnModel& model) {
    json.begin_object();
    json.field("name", model.name).field("origin", model.origin).field("index", model.index->describe());
    // A table's smoothing length, the one number of its description that a reader may want as a number.
    if (const auto* table = dynamic_cast<const TableProfile*>(model.index.get()); table && table->smoothing_m())
        json.field("smoothing_m", *table->smoothing_m());
    json.field("n_air", model.n_air);
    json.end_object();
}

}  // namespace firnray

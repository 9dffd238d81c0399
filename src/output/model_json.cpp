#include "output/model_json.hpp"

namespace firnray {

void write_model_json(JsonWriter& json, const FirnModel& model) {
    json.begin_object();
    json.field("name", model.name).field("origin", model.origin).field("index", model.index->describe());
    json.field("n_air", model.n_air);
    json.end_object();
}

}  // namespace firnray

// Writing delay tables (station/delay_table.hpp) in the long format: one row per source ×
// receiver × path, one "none" row for a receiver in the shadow zone, an error row for a bad
// source and an error row naming the receiver for a channel that failed. Each renders to a
// std::ostream; the std::string wrappers of the same name render into memory.
#pragma once

#include <optional>
#include <ostream>
#include <string>
#include <vector>

#include "io/json_writer.hpp"
#include "model/firn_model.hpp"
#include "station/delay_table.hpp"
#include "station/station.hpp"
#include "uncertainty/path_uncertainty.hpp"

namespace firnray {

enum class DelayTableFormat { csv, json };

// Writes a delay table a block of sources at a time, so that a long list of sources streams: the
// header (begin), the rows of each block in order (add), the closing text (finish). The output is
// the same however the sources are cut into blocks.
class DelayTableWriter {
public:
    // Receivers and options must outlive the writer.
    DelayTableWriter(std::ostream& out, DelayTableFormat format, const std::vector<Receiver>& receivers,
                     const DelayOptions& options, bool derivatives);
    // With delays --uncertainty: the rows carry the 1σ of ReceiverArrivals::spreads. The CSV opens
    // with a "# uncertainty:" comment line and gains, before events, the columns time_sigma_ns,
    // minus_reference_same_kind_sigma_ns, first_minus_reference_first_sigma_ns,
    // second_minus_first_sigma_ns, sigma_models and sigma_absent_models (empty where no σ can be
    // given); the JSON an `uncertainty` object, sigma_models per source and the same *_sigma_ns
    // members (null where none). Call before begin.
    void set_uncertainty(UncertaintyReport report) { uncertainty_ = std::move(report); }
    // The JSON describes `model` (read only here); the CSV does not name it (it may be null then).
    void begin(const FirnModel* model);
    void add(const std::vector<DelaySource>& sources, const std::vector<SourceDelays>& delays);
    void finish();

private:
    void add_json(const std::vector<DelaySource>& sources, const std::vector<SourceDelays>& delays);
    std::ostream& out_;
    DelayTableFormat format_;
    const std::vector<Receiver>& receivers_;
    const DelayOptions& options_;
    bool derivatives_;
    std::optional<UncertaintyReport> uncertainty_;
    JsonWriter json_;
};

// Columns name, input_line, receiver, path, kind, time_ns, minus_reference_same_kind_ns,
// first_minus_reference_first_ns, second_minus_first_ns, launch_zenith_deg, arrival_zenith_deg,
// (with derivatives) dt_dx_ns_per_m, dt_dy_ns_per_m, dt_dz_ns_per_m, and error.
void write_delay_table_csv(std::ostream& out, const std::vector<DelaySource>& sources,
                           const std::vector<SourceDelays>& delays, const std::vector<Receiver>& receivers,
                           const DelayOptions& options, bool derivatives);
std::string delay_table_csv(const std::vector<DelaySource>& sources, const std::vector<SourceDelays>& delays,
                            const std::vector<Receiver>& receivers, const DelayOptions& options, bool derivatives);

// {model: {name, origin, index, n_air} (output/model_json.hpp), reference_receiver, sources: [{name, input_line, position_m, receivers: [...]}]}; a bad
// source has `error` instead of position and receivers, a failed channel `error` instead of paths.
void write_delay_table_json(std::ostream& out, const std::vector<DelaySource>& sources,
                            const std::vector<SourceDelays>& delays, const std::vector<Receiver>& receivers,
                            const DelayOptions& options, bool derivatives, const FirnModel& model);
std::string delay_table_json(const std::vector<DelaySource>& sources, const std::vector<SourceDelays>& delays,
                             const std::vector<Receiver>& receivers, const DelayOptions& options, bool derivatives,
                             const FirnModel& model);

}  // namespace firnray

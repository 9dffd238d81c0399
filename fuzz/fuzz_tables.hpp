// Table files that fuzzed model files may name (the examples under models/ use these names), so
// that the table code behind a model file is reached too.
#pragma once

namespace firnray::fuzz {

// Writes synthetic-density.csv, index.csv and attenuation.csv into scratch_folder() once.
void write_table_files();

}  // namespace firnray::fuzz

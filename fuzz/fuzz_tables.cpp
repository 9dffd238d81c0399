#include "fuzz_tables.hpp"

#include "fuzz_support.hpp"

namespace firnray::fuzz {

void write_table_files() {
    static const bool written = [] {
        write_scratch_file("synthetic-density.csv",
                           "# a small density log\ndepth_m,density_kg_m3\n0,377\n2,407\n5,450\n10,520\n"
                           "20,610\n40,720\n80,850\n120,900\n");
        write_scratch_file("index.csv", "depth_m,z_m,n\n0,0,1.35\n10,-10,1.45\n20,-20,1.53\n40,-40,1.64\n"
                                        "80,-80,1.74\n");
        write_scratch_file("attenuation.csv", "depth_m,z_m,length_m\n0,0,1500\n500,-500,1450\n"
                                              "1000,-1000,1300\n2000,-2000,850\n");
        return true;
    }();
    (void)written;
}

}  // namespace firnray::fuzz

# Builds the seed corpus of every harness (cmake -P, run by the fuzz_seed_corpus target):
# CORPUS_DIR/fuzz_NAME/ gets the hand-made seeds of fuzz/seeds/fuzz_NAME/, the saved crash inputs
# of tests/fuzz_regressions/fuzz_NAME/, and the project's own example files from models/ and
# demo/ that suit the harness. Harnesses whose first byte picks a variant (model_tables,
# fit_data) get the example prefixed with a digit: '0'..'5' select variants 0..5.
cmake_minimum_required(VERSION 3.21)

function(add_seed harness file)
  file(COPY ${file} DESTINATION ${CORPUS_DIR}/${harness})
endfunction()

function(add_prefixed_seed harness prefix file)
  get_filename_component(name ${file} NAME)
  file(READ ${file} text)
  file(WRITE ${CORPUS_DIR}/${harness}/${prefix}-${name} "${prefix}${text}")
endfunction()

# The names listed in a regression folder's known-failures.txt (they would stop the fuzzer at once).
function(known_failures folder result)
  set(names "")
  if(EXISTS ${folder}/known-failures.txt)
    file(STRINGS ${folder}/known-failures.txt lines)
    foreach(line ${lines})
      if(line MATCHES "^([^# \t]+)")
        list(APPEND names ${CMAKE_MATCH_1})
      endif()
    endforeach()
  endif()
  set(${result} ${names} PARENT_SCOPE)
endfunction()

foreach(harness ${HARNESSES})
  file(MAKE_DIRECTORY ${CORPUS_DIR}/${harness})
  foreach(folder ${SOURCE_DIR}/fuzz/seeds/${harness} ${SOURCE_DIR}/tests/fuzz_regressions/${harness})
    if(IS_DIRECTORY ${folder})
      known_failures(${folder} skipped)
      file(GLOB inputs ${folder}/*)
      list(FILTER inputs EXCLUDE REGEX "/(known-failures\\.txt|README\\.md)$")
      foreach(input ${inputs})
        get_filename_component(name ${input} NAME)
        if(NOT name IN_LIST skipped)
          add_seed(${harness} ${input})
        endif()
      endforeach()
    endif()
  endforeach()
endforeach()

file(GLOB model_files ${SOURCE_DIR}/models/*.toml)
foreach(model ${model_files})
  add_seed(fuzz_model_file ${model})
endforeach()
add_seed(fuzz_model_file ${SOURCE_DIR}/models/synthetic-density.csv)
add_seed(fuzz_model_file ${SOURCE_DIR}/demo/prior-model.toml)
add_seed(fuzz_station_file ${SOURCE_DIR}/demo/station.toml)
add_seed(fuzz_sources_csv ${SOURCE_DIR}/demo/calibration-sources.csv)
add_seed(fuzz_arrivals_csv ${SOURCE_DIR}/demo/locate-events.csv)
add_prefixed_seed(fuzz_model_tables 2 ${SOURCE_DIR}/models/synthetic-density.csv)
add_prefixed_seed(fuzz_fit_data 2 ${SOURCE_DIR}/models/synthetic-density.csv)

# `cmake --build build --target bench`: the annotate benchmark (bench/run_bench.py) on
# generated corpora of 10k, 100k and 1M reactions, -j 1 and -j 2, with the RDKit baseline on
# 10k records when python3-rdkit is installed. Use a Release build for figures.
find_program(AS_PYTHON3 NAMES python3)
if(AS_PYTHON3)
  add_custom_target(bench
    COMMAND ${AS_PYTHON3} ${CMAKE_SOURCE_DIR}/bench/run_bench.py
            --addsite $<TARGET_FILE:addsite> --work ${CMAKE_BINARY_DIR}/bench-work
            --rdkit 10000
    DEPENDS addsite
    USES_TERMINAL
    COMMENT "annotate benchmark (10k, 100k, 1M records)")
endif()

# fuzz.cmake — libFuzzer targets (fuzz/fuzz_<target>.c) and their replay tests.
#
# -DAS_FUZZ=ON with clang (a separate tree: CC=clang cmake -S . -B build-fuzz -DAS_FUZZ=ON)
# builds the library with coverage instrumentation plus AddressSanitizer and
# UndefinedBehaviorSanitizer, and one libFuzzer binary fuzz_<target> per fuzz/fuzz_<target>.c.
# tests/fuzz.sh builds that tree and runs each binary for a bounded time.
#
# In every tree with tests (the normal and sanitizer builds) each target is also linked with
# fuzz/replay_main.c as replay_<target>, and ctest replays its seed corpus fuzz/corpus/<target>
# and its saved crashers and odd inputs tests/fuzz_corpus/<target>, so fixed bugs stay fixed.
option(AS_FUZZ "Build the libFuzzer targets in fuzz/ (clang only)" OFF)

file(GLOB AS_FUZZ_SOURCES CONFIGURE_DEPENDS ${CMAKE_SOURCE_DIR}/fuzz/fuzz_*.c)
list(REMOVE_ITEM AS_FUZZ_SOURCES ${CMAKE_SOURCE_DIR}/fuzz/fuzz_fail.c)

if(AS_FUZZ)
  if(NOT CMAKE_C_COMPILER_ID MATCHES "Clang")
    message(FATAL_ERROR "AS_FUZZ=ON needs clang (CC=clang): libFuzzer is part of clang")
  endif()
  set(AS_FUZZ_SAN -fsanitize=address,undefined -fno-sanitize-recover=all
      -fno-omit-frame-pointer)
  target_compile_options(addsite_obj PRIVATE -fsanitize=fuzzer-no-link ${AS_FUZZ_SAN})
  target_link_options(addsite PRIVATE -fsanitize=address,undefined)
  target_link_options(addsite_shared PRIVATE -fsanitize=address,undefined)
  foreach(src ${AS_FUZZ_SOURCES})
    get_filename_component(name ${src} NAME_WE)
    add_executable(${name} ${src} ${CMAKE_SOURCE_DIR}/fuzz/fuzz_fail.c)
    target_include_directories(${name} PRIVATE ${CMAKE_SOURCE_DIR}/fuzz)
    target_compile_options(${name} PRIVATE -fsanitize=fuzzer ${AS_FUZZ_SAN})
    target_link_options(${name} PRIVATE -fsanitize=fuzzer,address,undefined)
    target_link_libraries(${name} PRIVATE addsite_static)
  endforeach()
endif()

if(AS_TESTS)
  foreach(src ${AS_FUZZ_SOURCES})
    get_filename_component(name ${src} NAME_WE)
    string(REGEX REPLACE "^fuzz_" "" target ${name})
    add_executable(replay_${target} ${src} ${CMAKE_SOURCE_DIR}/fuzz/replay_main.c
                   ${CMAKE_SOURCE_DIR}/fuzz/fuzz_fail.c)
    target_include_directories(replay_${target} PRIVATE ${CMAKE_SOURCE_DIR}/fuzz)
    target_link_libraries(replay_${target} PRIVATE addsite_static)
    add_test(NAME replay_${target} COMMAND replay_${target}
             ${CMAKE_SOURCE_DIR}/fuzz/corpus/${target}
             ${CMAKE_SOURCE_DIR}/tests/fuzz_corpus/${target})
  endforeach()
endif()

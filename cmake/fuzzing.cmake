# -DPLANCKTON_BUILD_FUZZ=ON (clang only): the libFuzzer targets of tests/fuzz, and every planckton
# source instrumented for libFuzzer's coverage (-fsanitize=fuzzer-no-link; each target links with
# -fsanitize=fuzzer, which brings libFuzzer's main). The other targets of the build (tests, server,
# CLI) carry the instrumentation too and run normally: the sanitizer runtimes give its hooks a body.
# scripts/test-fuzz configures build-asan so, with PLANCKTON_SANITIZE=address,undefined, and the
# ASan stage of scripts/test-sanitizers runs the whole test suite in the same build, so that the
# libraries are built once for both. Eigen and Boost stay out of the coverage instrumentation
# (tests/fuzz/coverage-ignorelist.txt says why).
option(PLANCKTON_BUILD_FUZZ "Build the libFuzzer targets and instrument every source for them (clang only)" OFF)
if(NOT PLANCKTON_BUILD_FUZZ)
  return()
endif()
if(NOT CMAKE_CXX_COMPILER_ID MATCHES "Clang")
  message(FATAL_ERROR "PLANCKTON_BUILD_FUZZ needs clang (libFuzzer): configure with CXX=clang++-14")
endif()
add_compile_options(-fsanitize=fuzzer-no-link
                    -fsanitize-coverage-ignorelist=${PROJECT_SOURCE_DIR}/tests/fuzz/coverage-ignorelist.txt)
message(STATUS "planckton: libFuzzer coverage instrumentation (tests/fuzz)")

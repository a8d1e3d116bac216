# Sanitizer builds of every target (libraries, server, CLI, benchmarks, tests):
#
#   -DPLANCKTON_SANITIZE=address,undefined   AddressSanitizer (with LeakSanitizer) and UBSan
#   -DPLANCKTON_SANITIZE=thread              ThreadSanitizer
#   -DPLANCKTON_SANITIZE=undefined           UBSan alone (the long fuzz runs' build, twice as fast)
#   -DPLANCKTON_SANITIZE=                    none (the default; the Release build is unchanged)
#
# GCC or clang. scripts/test-fuzz and scripts/test-sanitizers configure build-asan and build-tsan with
# clang-14 (libFuzzer is clang's, so the fuzz targets and the ASan test suite share one build), and
# run the tests there with the run-time options that turn any report into a failed test. Debian's Ceres,
# glog, simdjson, cfitsio and cpp-httplib stay uninstrumented; ASan and UBSan need nothing from them,
# and TSan sees their locks through the intercepted pthread calls.
set(PLANCKTON_SANITIZE "" CACHE STRING "Sanitizers for every target: empty, address,undefined or thread")
set_property(CACHE PLANCKTON_SANITIZE PROPERTY STRINGS "" "address,undefined" "address" "undefined" "thread")

set(PLANCKTON_TEST_TIMEOUT_FACTOR 1)
if(PLANCKTON_SANITIZE STREQUAL "")
  return()
endif()

string(REPLACE "," ";" planckton_sanitizers "${PLANCKTON_SANITIZE}")
foreach(sanitizer IN LISTS planckton_sanitizers)
  if(NOT sanitizer MATCHES "^(address|undefined|thread)$")
    message(FATAL_ERROR "PLANCKTON_SANITIZE: unknown sanitizer '${sanitizer}' (accepted: address, undefined, thread)")
  endif()
endforeach()
# GCC refuses the combination at link time; say so at configure time instead.
if("thread" IN_LIST planckton_sanitizers AND "address" IN_LIST planckton_sanitizers)
  message(FATAL_ERROR "PLANCKTON_SANITIZE: thread cannot be combined with address (use two build directories)")
endif()

set(planckton_sanitize_flags -fsanitize=${PLANCKTON_SANITIZE})
if("undefined" IN_LIST planckton_sanitizers)
  # GCC leaves float-cast-overflow out of -fsanitize=undefined; a double out of an integer's range
  # converted to it (a count or index read from a document, say) is undefined behaviour all the same.
  list(APPEND planckton_sanitize_flags -fsanitize=float-cast-overflow)
endif()

# Line tables (-g1) and frame pointers give reports with file:line stacks; full debug information
# would only make the build slower. -O2 (placed after the build type's -O level, so it wins) and not
# -O1: at -O1 GCC leaves Eigen's small packet functions (pexp, pldexp) and expression loops out of
# line, and the instrumented model kernels ran 11 times slower than Release, which put the coverage
# study past its timeout and the fits past their time budgets.
add_compile_options(${planckton_sanitize_flags} -fno-omit-frame-pointer -g1 -O2)
add_link_options(${planckton_sanitize_flags})

if("undefined" IN_LIST planckton_sanitizers)
  # Every UBSan finding ends the process instead of printing and carrying on, so that it fails the
  # test that provoked it whatever that test checks.
  add_compile_options(-fno-sanitize-recover=all)
endif()
if("address" IN_LIST planckton_sanitizers OR "undefined" IN_LIST planckton_sanitizers)
  # libstdc++'s own precondition checks (operator[] in range, front() of a non-empty container):
  # they catch an index past size() that is still inside a vector's capacity, which ASan cannot see.
  # (Not _GLIBCXX_SANITIZE_VECTOR: Ceres fills our vectors from uninstrumented code, which would make
  # its annotations wrong.)
  add_compile_definitions(_GLIBCXX_ASSERTIONS)
endif()

# Test timeouts: the instrumented programs run several times slower (measured on 2 cores: the
# posterior sampling of bench.coverage_small 10 times, a 200,000-point fit 4.5 times under ASan and
# UBSan), so tests/CMakeLists.txt multiplies every TIMEOUT it sets by this factor: a hang still fails,
# a slow test does not.
if("thread" IN_LIST planckton_sanitizers)
  set(PLANCKTON_TEST_TIMEOUT_FACTOR 5)
else()
  set(PLANCKTON_TEST_TIMEOUT_FACTOR 3)
endif()

message(STATUS "planckton: sanitizers ${PLANCKTON_SANITIZE} (-O2 -g1), test timeouts x${PLANCKTON_TEST_TIMEOUT_FACTOR}")

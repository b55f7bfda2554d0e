# Fails when a C++ file under tests/ is not picked up by a build target: test sources must end in
# _test.cpp (tests/<stage>/ or tests/cli/), _bench.cpp (tests/bench/) or _fuzz.cpp (tests/fuzz/), or be doctest_main.cpp,
# or be tests/consumer/main.cpp (the library user's project that tests/cli/install_test.cpp builds
# against an installed tree).
file(GLOB_RECURSE all_cpp RELATIVE ${SOURCE_DIR} ${SOURCE_DIR}/tests/*.cpp)
set(stale "")
foreach(f ${all_cpp})
  if(NOT f MATCHES "^tests/(input|source|coupling|receiver|compliance|radio|chain|output|cli)/[^/]+_test\\.cpp$" AND NOT f MATCHES "^tests/bench/[^/]+_bench\\.cpp$"
     AND NOT f MATCHES "^tests/fuzz/[^/]+_fuzz\\.cpp$" AND NOT f STREQUAL "tests/doctest_main.cpp"
     AND NOT f STREQUAL "tests/consumer/main.cpp")
    list(APPEND stale ${f})
  endif()
endforeach()
if(stale)
  message(FATAL_ERROR "test sources that no target builds: ${stale}")
endif()

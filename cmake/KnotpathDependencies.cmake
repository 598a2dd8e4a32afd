# Finds knotpath's dependencies, all from Debian's packages. A missing one stops
# the configure step with the name of the apt package that provides it.

macro(knotpath_require package apt_name)
  find_package(${package} ${ARGN} QUIET)
  if(NOT ${package}_FOUND)
    message(FATAL_ERROR
      "knotpath needs ${package}, which was not found.\n"
      "On Debian/Ubuntu install it with:  sudo apt-get install ${apt_name}\n"
      "(or run .ci/run, which installs every package the project uses).")
  endif()
endmacro()

knotpath_require(Eigen3 libeigen3-dev 3.3 NO_MODULE)
knotpath_require(Boost libboost-dev 1.74)

if(KNOTPATH_BUILD_CLI)
  knotpath_require(CLI11 libcli11-dev CONFIG)
  knotpath_require(fmt libfmt-dev CONFIG)
  knotpath_require(nlohmann_json nlohmann-json3-dev CONFIG)
endif()
if(KNOTPATH_BUILD_TESTS)
  knotpath_require(GTest libgtest-dev CONFIG)
endif()
if(KNOTPATH_BUILD_BENCHMARKS)
  knotpath_require(benchmark libbenchmark-dev CONFIG)
endif()

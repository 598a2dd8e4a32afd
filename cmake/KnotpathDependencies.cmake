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
# Optional gzip input for the table reader (Debian zlib1g-dev). Without zlib
# the reader refuses gzip data with a message that says so.
option(KNOTPATH_USE_ZLIB "Read gzip-compressed tables through zlib when available" ON)
set(KNOTPATH_HAVE_ZLIB OFF)
if(KNOTPATH_BUILD_CLI AND KNOTPATH_USE_ZLIB)
  find_package(ZLIB QUIET)
  if(ZLIB_FOUND)
    set(KNOTPATH_HAVE_ZLIB ON)
  endif()
endif()
if(KNOTPATH_BUILD_TESTS)
  knotpath_require(GTest libgtest-dev CONFIG)
endif()
if(KNOTPATH_BUILD_BENCHMARKS)
  knotpath_require(benchmark libbenchmark-dev CONFIG)
endif()

# Optional multiprecision back ends (Debian libgmp-dev, libmpfr-dev). Without
# them knotpath::rational falls back to Boost's header-only cpp_rational and
# knotpath::mpfr_float is not defined.
option(KNOTPATH_USE_GMP "Use GMP for exact rationals when available" ON)
option(KNOTPATH_USE_MPFR "Provide knotpath::mpfr_float when MPFR is available" ON)
set(KNOTPATH_HAVE_GMP OFF)
set(KNOTPATH_HAVE_MPFR OFF)
if(KNOTPATH_USE_GMP)
  find_path(KNOTPATH_GMP_INCLUDE gmp.h)
  find_library(KNOTPATH_GMP_LIBRARY gmp)
  if(KNOTPATH_GMP_INCLUDE AND KNOTPATH_GMP_LIBRARY)
    set(KNOTPATH_HAVE_GMP ON)
  endif()
endif()
if(KNOTPATH_USE_MPFR AND KNOTPATH_HAVE_GMP)
  find_path(KNOTPATH_MPFR_INCLUDE mpfr.h)
  find_library(KNOTPATH_MPFR_LIBRARY mpfr)
  if(KNOTPATH_MPFR_INCLUDE AND KNOTPATH_MPFR_LIBRARY)
    set(KNOTPATH_HAVE_MPFR ON)
  endif()
endif()
# Imported targets, so that no exported target names a library by its path.
foreach(_lib GMP MPFR)
  string(TOLOWER ${_lib} _name)
  if(KNOTPATH_HAVE_${_lib} AND NOT TARGET knotpath::lib${_name})
    add_library(knotpath::lib${_name} UNKNOWN IMPORTED)
    set_target_properties(knotpath::lib${_name} PROPERTIES
      IMPORTED_LOCATION "${KNOTPATH_${_lib}_LIBRARY}"
      INTERFACE_INCLUDE_DIRECTORIES "${KNOTPATH_${_lib}_INCLUDE}")
  endif()
endforeach()
# Optional MPI (Debian libopenmpi-dev and openmpi-bin): the program reads the
# shards of a table on the processes of an MPI job, and the MPI tests run
# under mpiexec. Without it everything else builds, and the MPI tests are
# registered as skipped with a message.
option(KNOTPATH_USE_MPI "Build the program and its MPI tests with MPI when available" ON)
set(KNOTPATH_HAVE_MPI OFF)
if(KNOTPATH_USE_MPI AND KNOTPATH_BUILD_CLI)
  find_package(MPI COMPONENTS CXX QUIET)
  if(MPI_CXX_FOUND AND MPIEXEC_EXECUTABLE)
    set(KNOTPATH_HAVE_MPI ON)
  endif()
endif()
message(STATUS "knotpath: GMP rationals ${KNOTPATH_HAVE_GMP}, MPFR floats ${KNOTPATH_HAVE_MPFR}, gzip tables ${KNOTPATH_HAVE_ZLIB}, MPI ${KNOTPATH_HAVE_MPI}")

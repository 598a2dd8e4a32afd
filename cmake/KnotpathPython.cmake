# What the Python module (python/) needs: an interpreter with numpy, its
# headers, and pybind11 (Debian: python3-dev python3-numpy pybind11-dev; the
# tests also python3-pytest python3-pandas python3-scipy). Sets
# KNOTPATH_PYTHON_FOUND (the module can be built), KNOTPATH_PYTHON_MISSING
# (what the module lacks) and KNOTPATH_PYTHON_TEST_MISSING (what its tests lack).
#
# The interpreter is Debian's own, unless the caller names one
# (-DPython3_EXECUTABLE=...): a python3 found first on PATH (pyenv, a virtual
# environment) does not see the packages tools/install-deps.sh installs.
if(NOT DEFINED Python3_EXECUTABLE AND EXISTS /usr/bin/python3)
  set(Python3_EXECUTABLE /usr/bin/python3)
endif()
set(KNOTPATH_PYTHON_MISSING "")
set(KNOTPATH_PYTHON_TEST_MISSING "")
find_package(Python3 COMPONENTS Interpreter Development.Module QUIET)
if(NOT Python3_Interpreter_FOUND OR NOT Python3_Development.Module_FOUND)
  list(APPEND KNOTPATH_PYTHON_MISSING "python3-dev")
else()
  find_package(pybind11 2.6 CONFIG QUIET)
  if(NOT pybind11_FOUND)
    list(APPEND KNOTPATH_PYTHON_MISSING "pybind11-dev")
  endif()
  foreach(module_package IN ITEMS "numpy:python3-numpy" "pytest:python3-pytest" "pandas:python3-pandas"
                                  "scipy:python3-scipy")
    string(REPLACE ":" ";" pair "${module_package}")
    list(GET pair 0 module)
    list(GET pair 1 package)
    execute_process(COMMAND ${Python3_EXECUTABLE} -c "import ${module}" RESULT_VARIABLE missing
                    OUTPUT_QUIET ERROR_QUIET)
    if(missing AND module STREQUAL "numpy")
      list(APPEND KNOTPATH_PYTHON_MISSING "${package}")
    elseif(missing)
      list(APPEND KNOTPATH_PYTHON_TEST_MISSING "${package}")
    endif()
  endforeach()
endif()
string(REPLACE ";" " " KNOTPATH_PYTHON_TEST_MISSING "${KNOTPATH_PYTHON_TEST_MISSING}")
if(KNOTPATH_PYTHON_MISSING STREQUAL "")
  set(KNOTPATH_PYTHON_FOUND ON)
else()
  set(KNOTPATH_PYTHON_FOUND OFF)
  string(REPLACE ";" " " KNOTPATH_PYTHON_MISSING "${KNOTPATH_PYTHON_MISSING}")
  message(STATUS "knotpath: the Python module is not built; missing: ${KNOTPATH_PYTHON_MISSING} "
                 "(apt-get install them, or run tools/install-deps.sh)")
endif()

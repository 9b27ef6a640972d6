# Cross-checks of `helmix inspect` (Debian's /usr/bin/python3 with numpy, scipy
# and h5py; poppler-utils' pdftoppm for the PDF report). Each script exits
# non-zero on failure and ends with "N passed, N failed". Included from
# tests/CMakeLists.txt, where HX_MPIEXEC is defined.
if(NOT DEFINED HX_MPIEXEC)
  set(HX_MPIEXEC "mpiexec --allow-run-as-root --oversubscribe")
endif()

set(HX_PY_INSPECT_TESTS
  # name                   timeout (s)
  test_inspect_analytic    90
  test_inspect_numpy       120
  test_inspect_remove      90
  test_inspect_ranks       120
  test_inspect_check       150
  test_inspect_outputs     90
  test_inspect_errors      150
)

list(LENGTH HX_PY_INSPECT_TESTS _hx_n)
math(EXPR _hx_last "${_hx_n} - 1")
foreach(_hx_i RANGE 0 ${_hx_last} 2)
  math(EXPR _hx_j "${_hx_i} + 1")
  list(GET HX_PY_INSPECT_TESTS ${_hx_i} _hx_name)
  list(GET HX_PY_INSPECT_TESTS ${_hx_j} _hx_timeout)
  string(REGEX REPLACE "^test_" "" _hx_short "${_hx_name}")
  add_test(NAME py_${_hx_short}
           COMMAND /usr/bin/python3 ${CMAKE_CURRENT_LIST_DIR}/${_hx_name}.py
                   --helmix $<TARGET_FILE:helmix_cli> --mpiexec "${HX_MPIEXEC}")
  set_tests_properties(py_${_hx_short} PROPERTIES
    TIMEOUT ${_hx_timeout}
    LABELS "py;crosscheck;inspect"
    ENVIRONMENT "PYTHONDONTWRITEBYTECODE=1;OMPI_MCA_rmaps_base_oversubscribe=1")
endforeach()

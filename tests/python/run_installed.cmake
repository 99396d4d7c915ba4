# The installed Python package: `cmake --install` of BUILD_DIR (component ordex_python) into a
# temporary prefix, then /usr/bin/python3 imports ordex from PREFIX/SITE_REL (and not from the
# build tree) and computes with it. Driven by the ctest test python_installed.
set(prefix ${BUILD_DIR}/python_install_test)
file(REMOVE_RECURSE ${prefix})
execute_process(COMMAND ${CMAKE_COMMAND} --install ${BUILD_DIR} --prefix ${prefix} --component ordex_python
                RESULT_VARIABLE rc)
if(rc)
  message(FATAL_ERROR "cmake --install failed (${rc})")
endif()
foreach(f __init__.py results.py)
  if(NOT EXISTS ${prefix}/${SITE_REL}/ordex/${f})
    message(FATAL_ERROR "not installed: ${prefix}/${SITE_REL}/ordex/${f}")
  endif()
endforeach()
set(code "import ordex, numpy as np, sys
assert ordex.__file__.startswith(sys.argv[1]), ordex.__file__
s = ordex.load_model(sys.argv[2] + '/mathieu.toml')
m = ordex.floquet(s).monodromy
assert abs(np.linalg.det(m) - 1) < 1e-7, m
print('installed ordex', ordex.__version__, 'from', ordex.__file__)")
execute_process(COMMAND ${CMAKE_COMMAND} -E env PYTHONPATH=${prefix}/${SITE_REL}
                ${PYTHON} -c "${code}" ${prefix} ${MODELS_DIR}
                WORKING_DIRECTORY ${prefix} RESULT_VARIABLE rc)  # not beside the build tree's package
file(REMOVE_RECURSE ${prefix})
if(rc)
  message(FATAL_ERROR "importing the installed package failed (${rc})")
endif()

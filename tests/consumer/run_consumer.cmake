# Builds and runs the consumer project (tests/consumer) the way a user would, as one ctest test:
#   cmake -DMODE=install|shared|subdirectory -DORDEX_SOURCE=... -DWORK=... [options] -P run_consumer.cmake
# MODE install:      installs ORDEX_BUILD (this build tree, its library component) into WORK/prefix.
# MODE shared:       configures a separate shared-library build of ORDEX_SOURCE (library only),
#                    builds the library target and installs it into WORK/prefix.
# In both, the consumer is then configured with find_package(ordex 0.2), built and run.
# MODE subdirectory: tests/consumer/subdirectory, which does add_subdirectory(ORDEX_SOURCE).
# Options passed on to every configure: CXX (compiler), LAUNCHER (e.g. ccache), NATIVE and
# WARNINGS (ORDEX_NATIVE, ORDEX_WARNINGS: the same compile lines as this build, so a compiler
# cache serves the extra library builds); NM
# (for the check that a static library needs no Boost.Program_options).

foreach(var MODE ORDEX_SOURCE WORK)
  if(NOT DEFINED ${var})
    message(FATAL_ERROR "run_consumer.cmake: ${var} not given")
  endif()
endforeach()

function(run)
  execute_process(COMMAND ${ARGN} RESULT_VARIABLE rc OUTPUT_VARIABLE out ERROR_VARIABLE out)
  if(NOT rc EQUAL 0)
    string(REPLACE ";" " " cmd "${ARGN}")
    message(FATAL_ERROR "failed (${rc}): ${cmd}\n${out}")
  endif()
  set(last_output "${out}" PARENT_SCOPE)
endfunction()

# Fails naming the file and its lines when a line of one of FILES matches REGEX.
function(fail_if_any_line_matches files regex what)
  foreach(f ${files})
    file(STRINGS "${f}" bad REGEX "${regex}")
    if(bad)
      message(FATAL_ERROR "${what}: ${f}: ${bad}")
    endif()
  endforeach()
endfunction()

set(common_args -DCMAKE_BUILD_TYPE=Release)
if(CXX)
  list(APPEND common_args -DCMAKE_CXX_COMPILER=${CXX})
endif()
if(LAUNCHER)
  list(APPEND common_args -DCMAKE_CXX_COMPILER_LAUNCHER=${LAUNCHER})
endif()

file(REMOVE_RECURSE "${WORK}")
file(MAKE_DIRECTORY "${WORK}")
set(prefix "${WORK}/prefix")
set(consumer_src "${ORDEX_SOURCE}/tests/consumer")

if(MODE STREQUAL "install" OR MODE STREQUAL "shared")
  if(MODE STREQUAL "shared")
    set(ORDEX_BUILD "${WORK}/ordex-build")
    run(${CMAKE_COMMAND} -S "${ORDEX_SOURCE}" -B "${ORDEX_BUILD}" ${common_args}
        -DBUILD_SHARED_LIBS=ON -DORDEX_TESTS=OFF -DORDEX_APPS=OFF -DORDEX_NATIVE=${NATIVE}
        -DORDEX_WARNINGS=${WARNINGS})
    run(${CMAKE_COMMAND} --build "${ORDEX_BUILD}" --target ordex --parallel 2)
  endif()
  run(${CMAKE_COMMAND} --install "${ORDEX_BUILD}" --prefix "${prefix}" --component ordex_library)

  # The package's shape: config files, the umbrella, no header that needs a private dependency.
  foreach(f lib/cmake/ordex/ordexConfig.cmake lib/cmake/ordex/ordexConfigVersion.cmake
            include/ordex/ordex.hpp include/ordex/model/system.hpp include/ordex/io/errors.hpp)
    if(NOT EXISTS "${prefix}/${f}")
      message(FATAL_ERROR "not installed: ${prefix}/${f}")
    endif()
  endforeach()
  file(GLOB_RECURSE headers "${prefix}/include/*")
  fail_if_any_line_matches("${headers}"
      "#include [<\"](cvode/|sundials/|nvector/|sunlinsol/|muParser|toml\\+\\+/|boost/program_options|common/front_end|io/app\\.hpp)"
      "an installed header includes a private dependency")
  file(GLOB target_files "${prefix}/lib/cmake/ordex/ordexTargets*.cmake")
  fail_if_any_line_matches("${target_files}" "program_options|ordex_frontend|ordex_private_deps"
      "the exported targets name the command-line front end or an internal target")
  # A static library must not need Boost.Program_options at any link (the regulator used to).
  file(GLOB archives "${prefix}/lib/libordex.a")
  if(archives AND NM)
    run(${NM} -C -u ${archives})
    if(last_output MATCHES "program_options")
      message(FATAL_ERROR "libordex.a refers to Boost.Program_options")
    endif()
  endif()

  run(${CMAKE_COMMAND} -S "${consumer_src}" -B "${WORK}/consumer" ${common_args}
      "-DCMAKE_PREFIX_PATH=${prefix}")
elseif(MODE STREQUAL "subdirectory")
  run(${CMAKE_COMMAND} -S "${consumer_src}/subdirectory" -B "${WORK}/consumer" ${common_args}
      "-DORDEX_SOURCE=${ORDEX_SOURCE}" -DORDEX_NATIVE=${NATIVE} -DORDEX_WARNINGS=${WARNINGS})
else()
  message(FATAL_ERROR "run_consumer.cmake: unknown MODE ${MODE}")
endif()

run(${CMAKE_COMMAND} --build "${WORK}/consumer" --target app --parallel 2)
run("${WORK}/consumer/app")
message(STATUS "${last_output}")
if(MODE STREQUAL "shared")
  run(ldd "${WORK}/consumer/app")
  if(NOT last_output MATCHES "libordex\\.so")
    message(FATAL_ERROR "the consumer does not use the shared libordex:\n${last_output}")
  endif()
endif()
file(REMOVE_RECURSE "${WORK}")

# ctest tests of the package, included from tests/CMakeLists.txt. Each runs run_consumer.cmake
# in its own folder under the build tree; the configure options of this build (compiler, ccache,
# ORDEX_NATIVE) are passed on, so the extra library builds reuse ccache's objects when present.
set(ordex_consumer_args
    -DORDEX_SOURCE=${PROJECT_SOURCE_DIR}
    -DCXX=${CMAKE_CXX_COMPILER}
    -DLAUNCHER=${CMAKE_CXX_COMPILER_LAUNCHER}
    -DNATIVE=${ORDEX_NATIVE}
    -DWARNINGS=${ORDEX_WARNINGS}
    -DNM=${CMAKE_NM})
set(ordex_consumer_script ${CMAKE_CURRENT_LIST_DIR}/run_consumer.cmake)
set(ordex_consumer_work ${PROJECT_BINARY_DIR}/package-tests)

if(ORDEX_INSTALL)
  # This build tree's library, installed and used through find_package (static unless this
  # build is shared).
  add_test(NAME package_consumer_installed
           COMMAND ${CMAKE_COMMAND} ${ordex_consumer_args} -DMODE=install
                   -DORDEX_BUILD=${PROJECT_BINARY_DIR} -DWORK=${ordex_consumer_work}/installed
                   -P ${ordex_consumer_script})
endif()
# A shared libordex built apart (library target only) and installed.
add_test(NAME package_consumer_shared
         COMMAND ${CMAKE_COMMAND} ${ordex_consumer_args} -DMODE=shared
                 -DWORK=${ordex_consumer_work}/shared -P ${ordex_consumer_script})
# ordex as a subproject of the consumer.
add_test(NAME package_consumer_subdirectory
         COMMAND ${CMAKE_COMMAND} ${ordex_consumer_args} -DMODE=subdirectory
                 -DWORK=${ordex_consumer_work}/subdirectory -P ${ordex_consumer_script})
set_tests_properties(package_consumer_shared package_consumer_subdirectory PROPERTIES
    TIMEOUT 1200 PROCESSORS 2 LABELS package)
if(TEST package_consumer_installed)
  set_tests_properties(package_consumer_installed PROPERTIES TIMEOUT 600 LABELS package)
endif()
# The document shows the program the tests above build.
add_test(NAME package_docs_program
         COMMAND ${CMAKE_COMMAND} -DORDEX_SOURCE=${PROJECT_SOURCE_DIR}
                 -P ${CMAKE_CURRENT_LIST_DIR}/check_docs_program.cmake)
set_tests_properties(package_docs_program PROPERTIES LABELS package)

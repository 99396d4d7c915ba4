# Installs the public headers: the umbrella lib/ordex.hpp and every header it reaches through
# `#include "module/name.hpp"`, each under PREFIX/include/ordex/<module>/. Run at install time
# (install(CODE) in the top-level CMakeLists.txt), so the list follows the headers as they are
# then: a header a public header includes is installed with it, and a header nothing public
# reaches (an internal one) is not.
#
cmake_policy(VERSION 3.18)  # also when run from the install script, which sets none

# Inputs: ORDEX_LIB_DIR (the source lib/ folder), ORDEX_HEADER_DESTINATION (absolute, usually
# ${CMAKE_INSTALL_PREFIX}/include/ordex).

function(ordex_public_header_closure lib_dir out_var)
  set(pending ordex.hpp)
  set(seen "")
  while(pending)
    list(POP_FRONT pending rel)
    if(rel IN_LIST seen)
      continue()
    endif()
    if(NOT EXISTS "${lib_dir}/${rel}")
      message(FATAL_ERROR "ordex: a public header includes \"${rel}\", which is not in lib/")
    endif()
    list(APPEND seen ${rel})
    file(STRINGS "${lib_dir}/${rel}" lines REGEX "^[ \t]*#[ \t]*include[ \t]*\"[^\"]+\"")
    get_filename_component(dir "${rel}" DIRECTORY)
    foreach(line IN LISTS lines)
      string(REGEX REPLACE "^[ \t]*#[ \t]*include[ \t]*\"([^\"]+)\".*" "\\1" inc "${line}")
      # Quoted includes resolve from lib/ ("model/system.hpp") or beside the includer.
      if(EXISTS "${lib_dir}/${inc}")
        list(APPEND pending "${inc}")
      elseif(dir AND EXISTS "${lib_dir}/${dir}/${inc}")
        list(APPEND pending "${dir}/${inc}")
      else()
        message(FATAL_ERROR "ordex: ${rel} includes \"${inc}\", which is not in lib/")
      endif()
    endforeach()
  endwhile()
  set(${out_var} ${seen} PARENT_SCOPE)
endfunction()

if(DEFINED ORDEX_LIB_DIR AND DEFINED ORDEX_HEADER_DESTINATION)
  ordex_public_header_closure("${ORDEX_LIB_DIR}" ordex_headers)
  foreach(rel IN LISTS ordex_headers)
    get_filename_component(dir "${ORDEX_HEADER_DESTINATION}/${rel}" DIRECTORY)
    file(INSTALL DESTINATION "${dir}" TYPE FILE FILES "${ORDEX_LIB_DIR}/${rel}")
  endforeach()
endif()

# The layer rule, checked by compiling: for every layer L and every layer U above it, a file
# compiled as L is (with L's usage requirements: its own and its lower layers' folders) that
# includes a header of U must fail to compile, on that include; the same probe including a
# header of L itself must compile, so a broken probe cannot pass for a kept rule. Run by ctest
# (test_layers) as
#   cmake -DBUILD_DIR=... -DGENERATOR=... -DPROBES="L:U:HEADER;..." -DOBJECTS="..." -P check_layers.cmake
# (OBJECTS: every probe's object file, the one of L including U named L_U.c.o).
# It deletes the probes' objects, builds every probe at once (keep going past failures), then
# judges each probe by its object and by the build's messages.
cmake_minimum_required(VERSION 3.20)
set(keep_going "")
if(GENERATOR MATCHES "Ninja")
  set(keep_going -- -k 0)
elseif(GENERATOR MATCHES "Makefiles")
  set(keep_going -- -k)
endif()
file(REMOVE ${OBJECTS})
execute_process(COMMAND ${CMAKE_COMMAND} --build ${BUILD_DIR} --target layer_probes ${keep_going}
                OUTPUT_VARIABLE out ERROR_VARIABLE out)
set(failures 0)
set(checked 0)
foreach(probe ${PROBES})
  string(REPLACE ":" ";" parts "${probe}")
  list(GET parts 0 lower)
  list(GET parts 1 upper)
  list(GET parts 2 header)
  set(object "")
  foreach(o ${OBJECTS})
    if(o MATCHES "/${lower}_${upper}\\.c\\.o(bj)?$")
      set(object ${o})
    endif()
  endforeach()
  if(NOT object)
    message(FATAL_ERROR "no object file of the probe ${lower}_${upper} among ${OBJECTS}")
  endif()
  math(EXPR checked "${checked} + 1")
  if(lower STREQUAL upper)
    if(NOT EXISTS ${object})
      message(SEND_ERROR "layer ${lower} cannot include its own header ${header}")
      math(EXPR failures "${failures} + 1")
    endif()
  elseif(EXISTS ${object})
    message(SEND_ERROR "layer ${lower} includes ${header} of the layer ${upper} above it: the "
                       "include directories let an upward include through")
    math(EXPR failures "${failures} + 1")
  elseif(NOT out MATCHES "${lower}_${upper}\\.c[^\n]*${header}[^\n]*(No such file|not found)")
    message(SEND_ERROR "layer ${lower} including ${header} (${upper}) did not fail for the "
                       "missing header")
    math(EXPR failures "${failures} + 1")
  endif()
endforeach()
if(checked EQUAL 0)
  message(FATAL_ERROR "no probes were given")
endif()
if(failures GREATER 0)
  message(FATAL_ERROR "${failures} of ${checked} layer probes broke the rule; the build said:\n${out}")
endif()
message(STATUS "${checked} layer probes: every upward include refused, every own include compiled")

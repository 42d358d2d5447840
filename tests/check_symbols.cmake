# The naming and layer rules, checked on the compiled objects with nm:
#  - every symbol a module exports (defined and global) is named after its file: tp_<file> or
#    tp_<file>_..., e.g. tp_grid_refine in grid.c, tp_cmd_warmup in cmd_warmup.c;
#  - every tp_ symbol a layer's objects use is defined in that layer or one below it (a lower
#    layer calling up through a hand-written prototype would pass the include check).
# Run by ctest (test_symbols) as
#   cmake -DNM=... -DLAYERS="base;input;..." -DOBJECTS_<layer>="..." -P check_symbols.cmake
cmake_minimum_required(VERSION 3.20)
set(failures 0)
set(exported 0)

# nm over a list of objects: "<object>:" lines, then "<address> <type> <name>" or
# "                 U <name>" lines, in the order given.
function(run_nm out_var)
  execute_process(COMMAND ${NM} ${ARGN} RESULT_VARIABLE rc OUTPUT_VARIABLE text
                  ERROR_VARIABLE err)
  if(NOT rc EQUAL 0)
    message(FATAL_ERROR "${NM} ${ARGN} failed: ${err}")
  endif()
  set(${out_var} "${text}" PARENT_SCOPE)
endfunction()

set(index 0)
foreach(layer ${LAYERS})
  set(objects ${OBJECTS_${layer}})
  if(NOT objects)
    message(FATAL_ERROR "no objects for the layer ${layer}")
  endif()
  list(LENGTH objects n_objects)
  set(layer_index_${layer} ${index})
  math(EXPR index "${index} + 1")
  run_nm(text -g --defined-only -A ${objects})
  string(REPLACE "\n" ";" lines "${text}")
  foreach(line ${lines})
    # -A: "<object>: <address> <type> <name>"
    if(NOT line MATCHES "^(.*): *[0-9a-fA-F]* +([A-Za-z]) +([^ ]+)$")
      continue()
    endif()
    set(object "${CMAKE_MATCH_1}")
    set(name "${CMAKE_MATCH_3}")
    if(name MATCHES "^_" OR name MATCHES "\\.")
      continue() # compiler and sanitizer symbols
    endif()
    get_filename_component(stem "${object}" NAME)
    string(REGEX REPLACE "\\.c\\.o(bj)?$" "" stem "${stem}")
    math(EXPR exported "${exported} + 1")
    set(defined_in_${name} ${layer})
    if(NOT name MATCHES "^tp_${stem}(_|$)")
      message(SEND_ERROR "${stem}.c (${layer}) exports '${name}': name it tp_${stem}_...")
      math(EXPR failures "${failures} + 1")
    endif()
  endforeach()
endforeach()

foreach(layer ${LAYERS})
  run_nm(text -u -A ${OBJECTS_${layer}})
  string(REPLACE "\n" ";" lines "${text}")
  foreach(line ${lines})
    if(NOT line MATCHES "^(.*): +U +(tp_[A-Za-z0-9_]+)$")
      continue()
    endif()
    set(object "${CMAKE_MATCH_1}")
    set(name "${CMAKE_MATCH_2}")
    get_filename_component(file "${object}" NAME)
    if(NOT DEFINED defined_in_${name})
      message(SEND_ERROR "${file} (${layer}) uses '${name}', which no layer defines")
      math(EXPR failures "${failures} + 1")
    elseif(layer_index_${defined_in_${name}} GREATER layer_index_${layer})
      message(SEND_ERROR "${file} (${layer}) uses '${name}' of the layer "
                         "${defined_in_${name}} above it")
      math(EXPR failures "${failures} + 1")
    endif()
  endforeach()
endforeach()

if(exported LESS 100)
  message(FATAL_ERROR "only ${exported} exported symbols found: the objects were not read")
endif()
if(failures GREATER 0)
  message(FATAL_ERROR "${failures} symbols break the naming or layer rules")
endif()
message(STATUS "${exported} exported symbols named after their files, every use downward")

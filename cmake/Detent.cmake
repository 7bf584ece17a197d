# Detent.cmake: generate C from a detent spec as part of a CMake build.
#
#   list(APPEND CMAKE_MODULE_PATH "${PATH_TO_DETENT}/cmake")
#   include(Detent)
#   add_executable(pump main.c)
#   detent_add_machine(pump specs/bilge_pump.detent)
#
# detent_add_machine(<target> <spec>
#                    [MACHINE <Name>...]
#                    [OUTPUT_DIR <dir>])
#
# Adds a build step that runs `detent gen c <spec> -o <dir>` whenever the spec (or the
# detent binary) changes, adds the generated `<snake>.c` of each machine to <target>'s
# sources and <dir> to its include directories, so `#include "bilge_pump.h"` works.
#
#   <spec>       The .detent file, relative to the current source directory or absolute.
#   MACHINE      Which machines of the spec go into <target> (default: every machine of
#                the file). `gen c` still writes the files of every machine of the spec.
#   OUTPUT_DIR   Where the generated files go (default:
#                ${CMAKE_CURRENT_BINARY_DIR}/detent/<spec name without extension>).
#
# The detent binary is DETENT_EXECUTABLE: set it (-DDETENT_EXECUTABLE=/path/to/detent) or
# let find_program look for `detent` on PATH. The machines of a spec are read from the
# spec when CMake configures; the spec is a configure dependency, so adding or renaming a
# machine reconfigures on the next build. A spec with errors fails the build with
# detent's diagnostics, as `detent gen c` prints them.

include_guard(GLOBAL)

# The file stem `gen c` uses for a machine: its name in snake_case, as detent writes it
# (`BilgePump` -> `bilge_pump`, `HTTPParser` -> `http_parser`, `Uart2Rx` -> `uart2_rx`).
function(_detent_snake name out_var)
  string(REGEX REPLACE "([A-Z])([A-Z][a-z])" "\\1_\\2" s "${name}")
  string(REGEX REPLACE "([a-z0-9])([A-Z])" "\\1_\\2" s "${s}")
  string(TOLOWER "${s}" s)
  set(${out_var} "${s}" PARENT_SCOPE)
endfunction()

# The names of the machines a spec defines, in order (comments removed first).
function(_detent_machines spec out_var)
  file(READ "${spec}" text)
  # Block comments, then line comments (doc comments included), then strings.
  string(REGEX REPLACE "/\\*([^*]|\\*+[^*/])*\\*+/" " " text "${text}")
  string(REGEX REPLACE "//[^\n]*" " " text "${text}")
  string(REGEX MATCHALL "(^|[^A-Za-z0-9_])machine[ \t\r\n]+[A-Za-z_][A-Za-z0-9_]*" found "${text}")
  set(names "")
  foreach(m IN LISTS found)
    string(REGEX REPLACE ".*machine[ \t\r\n]+" "" n "${m}")
    list(APPEND names "${n}")
  endforeach()
  set(${out_var} "${names}" PARENT_SCOPE)
endfunction()

function(detent_add_machine target spec)
  cmake_parse_arguments(PARSE_ARGV 2 ARG "" "OUTPUT_DIR" "MACHINE")
  if(ARG_UNPARSED_ARGUMENTS)
    message(FATAL_ERROR "detent_add_machine: unknown arguments: ${ARG_UNPARSED_ARGUMENTS}")
  endif()
  if(NOT TARGET "${target}")
    message(FATAL_ERROR "detent_add_machine: `${target}` is not a target; add it first "
                        "(add_executable or add_library)")
  endif()
  if(NOT DETENT_EXECUTABLE)
    find_program(DETENT_EXECUTABLE detent)
  endif()
  if(NOT DETENT_EXECUTABLE)
    message(FATAL_ERROR "detent_add_machine: the `detent` binary was not found on PATH; "
                        "set DETENT_EXECUTABLE to its path")
  endif()

  get_filename_component(spec "${spec}" ABSOLUTE BASE_DIR "${CMAKE_CURRENT_SOURCE_DIR}")
  if(NOT EXISTS "${spec}")
    message(FATAL_ERROR "detent_add_machine: spec `${spec}` does not exist")
  endif()
  get_filename_component(stem "${spec}" NAME_WE)
  if(ARG_OUTPUT_DIR)
    get_filename_component(out_dir "${ARG_OUTPUT_DIR}" ABSOLUTE
                           BASE_DIR "${CMAKE_CURRENT_BINARY_DIR}")
  else()
    set(out_dir "${CMAKE_CURRENT_BINARY_DIR}/detent/${stem}")
  endif()

  # Editing the spec may add or rename machines, hence files: configure again.
  set_property(DIRECTORY APPEND PROPERTY CMAKE_CONFIGURE_DEPENDS "${spec}")
  _detent_machines("${spec}" all_machines)
  if(NOT all_machines)
    message(FATAL_ERROR "detent_add_machine: `${spec}` defines no machine")
  endif()
  if(ARG_MACHINE)
    foreach(m IN LISTS ARG_MACHINE)
      if(NOT m IN_LIST all_machines)
        string(REPLACE ";" ", " have "${all_machines}")
        message(FATAL_ERROR "detent_add_machine: `${spec}` has no machine `${m}`; "
                            "it has: ${have}")
      endif()
    endforeach()
    set(chosen ${ARG_MACHINE})
  else()
    set(chosen ${all_machines})
  endif()

  set(outputs "")
  foreach(m IN LISTS all_machines)
    _detent_snake("${m}" snake)
    list(APPEND outputs "${out_dir}/${snake}.h" "${out_dir}/${snake}.c")
  endforeach()
  set(sources "")
  foreach(m IN LISTS chosen)
    _detent_snake("${m}" snake)
    list(APPEND sources "${out_dir}/${snake}.c" "${out_dir}/${snake}.h")
  endforeach()

  # One command per output folder: two targets sharing a spec share the step.
  string(MAKE_C_IDENTIFIER "${out_dir}" key)
  get_property(done GLOBAL PROPERTY "_DETENT_RULE_${key}")
  if(NOT done)
    set_property(GLOBAL PROPERTY "_DETENT_RULE_${key}" TRUE)
    file(RELATIVE_PATH shown "${CMAKE_SOURCE_DIR}" "${spec}")
    add_custom_command(
      OUTPUT ${outputs}
      COMMAND "${CMAKE_COMMAND}" -E make_directory "${out_dir}"
      COMMAND "${DETENT_EXECUTABLE}" gen c "${spec}" -o "${out_dir}"
      DEPENDS "${spec}" "${DETENT_EXECUTABLE}"
      COMMENT "detent: generating C from ${shown}"
      VERBATIM)
  endif()

  target_sources("${target}" PRIVATE ${sources})
  get_target_property(type "${target}" TYPE)
  if(type STREQUAL "EXECUTABLE")
    target_include_directories("${target}" PRIVATE "${out_dir}")
  else()
    target_include_directories("${target}" PUBLIC "${out_dir}")
  endif()
endfunction()

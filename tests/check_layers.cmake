# The layers as the build enforces them (docs/architecture.md): with the include paths a target
# compiles with (its own published headers and those of the targets it links), a header of a
# layer above it is not found. Run by ctest as `layers`:
#   cmake -DCXX=<compiler> -DPUBLISHED=<build>/published -P check_layers.cmake
# Each case: the target, the published folders it sees, a header it must not reach.
set(cases
  "peakplan_models|peakplan_models|planner/input/chain_file.hpp"
  "peakplan_models|peakplan_models|reports/json_report.hpp"
  "peakplan_input|peakplan_input,peakplan_models|planner/planner.hpp"
  "peakplan_input|peakplan_input,peakplan_models|reports/text_report.hpp"
  "peakplan_planner|peakplan_planner,peakplan_input,peakplan_models|reports/json_report.hpp"
  "peakplan_planner|peakplan_planner,peakplan_input,peakplan_models|planner/commands/command.hpp"
  "peakplan_reports|peakplan_reports,peakplan_planner,peakplan_input,peakplan_models|planner/commands/command.hpp")
set(source "${CMAKE_CURRENT_BINARY_DIR}/layers_probe.cpp")
set(failures "")
foreach(case IN LISTS cases)
  string(REPLACE "|" ";" parts "${case}")
  list(GET parts 0 target)
  list(GET parts 1 folders)
  list(GET parts 2 header)
  string(REPLACE "," ";" folders "${folders}")
  set(flags "")
  foreach(folder IN LISTS folders)
    if(NOT IS_DIRECTORY "${PUBLISHED}/${folder}")
      message(FATAL_ERROR "no published headers for ${folder} in ${PUBLISHED}")
    endif()
    list(APPEND flags "-I${PUBLISHED}/${folder}")
  endforeach()
  # The header itself exists (a typo here would pass for the wrong reason).
  get_filename_component(repo "${CMAKE_CURRENT_LIST_DIR}/.." ABSOLUTE)
  if(NOT EXISTS "${repo}/${header}")
    message(FATAL_ERROR "${header} does not exist in ${repo}")
  endif()
  file(WRITE "${source}" "#include \"${header}\"\n")
  execute_process(COMMAND ${CXX} -E ${flags} "${source}" RESULT_VARIABLE status OUTPUT_QUIET ERROR_VARIABLE err)
  if(status EQUAL 0 OR NOT err MATCHES "No such file")
    string(APPEND failures "  ${target} reaches ${header}\n")
  endif()
endforeach()
if(failures)
  message(FATAL_ERROR "layers broken:\n${failures}")
endif()
message(STATUS "every target sees only its own layer and those below")

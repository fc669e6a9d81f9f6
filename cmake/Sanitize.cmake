# UNFURL_SANITIZE: a list of sanitizers applied to every target.
# UNFURL_SANITIZE_LEAN (off unless asked for; .ci/run asks): a sanitizer build that costs
# about half as much to compile. Every file gets line tables only (-g1, enough for the file
# and line of every sanitizer report) and every target but the engine -O1; the engine, where
# the tests spend their time, stays at the build type's level. See bench/RESULTS.md "CI time".
option(UNFURL_SANITIZE_LEAN "Sanitizer builds: -g1 everywhere, -O1 outside the engine" OFF)
if(UNFURL_SANITIZE)
  foreach(s IN LISTS UNFURL_SANITIZE)
    if(NOT s MATCHES "^(address|undefined|thread)$")
      message(FATAL_ERROR "UNFURL_SANITIZE: unknown sanitizer '${s}'")
    endif()
  endforeach()
  if("thread" IN_LIST UNFURL_SANITIZE AND "address" IN_LIST UNFURL_SANITIZE)
    message(FATAL_ERROR "UNFURL_SANITIZE: thread and address sanitizers cannot be combined")
  endif()
  list(JOIN UNFURL_SANITIZE "," _unfurl_sanitizers)
  add_compile_options(-fsanitize=${_unfurl_sanitizers} -fno-omit-frame-pointer
                      -fno-sanitize-recover=undefined)
  add_link_options(-fsanitize=${_unfurl_sanitizers})
  if(UNFURL_SANITIZE_LEAN)
    # Later on the command line than the build type's -O2 -g, so these win.
    add_compile_options(-O1 -g1)
  endif()
elseif(UNFURL_SANITIZE_LEAN)
  message(FATAL_ERROR "UNFURL_SANITIZE_LEAN: only for sanitizer builds (UNFURL_SANITIZE is empty)")
endif()

# The engine's optimisation level back to the build type's in a lean sanitizer build: called
# once the engine target exists.
function(unfurl_sanitize_lean_engine target)
  if(UNFURL_SANITIZE AND UNFURL_SANITIZE_LEAN)
    string(TOUPPER "${CMAKE_BUILD_TYPE}" _type)
    string(REGEX MATCH "-O[0-3sg]" _level "${CMAKE_CXX_FLAGS_${_type}}")
    if(_level)
      target_compile_options(${target} PRIVATE ${_level})
    endif()
  endif()
endfunction()

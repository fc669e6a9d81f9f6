# Driven by ctest: install, configure the consumer, build it, run it; any failure fails.
file(REMOVE_RECURSE ${SCRATCH})
function(step)
  execute_process(COMMAND ${ARGN} RESULT_VARIABLE rc)
  if(NOT rc EQUAL 0)
    message(FATAL_ERROR "failed (${rc}): ${ARGN}")
  endif()
endfunction()
step(${CMAKE_COMMAND} --install ${UNFURL_BUILD_DIR} --prefix ${SCRATCH}/prefix)
step(${CMAKE_COMMAND} -S ${CONSUMER_SOURCE} -B ${SCRATCH}/build -DCMAKE_PREFIX_PATH=${SCRATCH}/prefix
     -DCMAKE_BUILD_TYPE=Release)
step(${CMAKE_COMMAND} --build ${SCRATCH}/build)
step(${SCRATCH}/build/consumer)

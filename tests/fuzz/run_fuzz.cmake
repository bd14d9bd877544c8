# tests/fuzz/run_fuzz.cmake — one deterministic fuzz step for CTest:
#   cmake -DFUZZER=… -DWORK=… -DRUNS=… -DCORPORA="a;b" -P run_fuzz.cmake
# Runs the fuzzer with a fixed -seed, a fixed -runs, no corpus reloading, no CMP
# mutations, no address-space randomisation and inputs of at most 20 000 bytes (the
# regression step runs longer ones whole) over one copy of the given corpora (read, never
# written: new inputs go to WORK, emptied first), twice, and fails on a crash, a sanitizer report, a leak, a timeout, or
# when the two runs do not find the same new inputs (libFuzzer names each by its SHA-1, so
# equal names mean equal inputs). Each pass's log is kept in WORK/passN/log.
foreach(var FUZZER WORK RUNS CORPORA)
  if(NOT DEFINED ${var})
    message(FATAL_ERROR "run_fuzz.cmake needs -D${var}=…")
  endif()
endforeach()

# Three things made runs with one seed differ, all removed here: libFuzzer's periodic
# re-reading of the corpus folders (-reload, timed by the clock); address-space layout
# randomisation (some code under test follows pointer values), which setarch -R turns off
# for the fuzzer (util-linux, setarch(8)); and the operands of comparisons, which
# libFuzzer records and splices into later inputs (its CMP mutations, -use_cmp). Those
# operands include values that are not the input's: addresses of memory whose place
# depends on what the process mapped before, and stack bytes a comparison reads but whose
# result nothing uses. They varied with the load on the machine: chain_fuzz and
# fits_disk_fuzz found different inputs in 2 of 60 suite runs beside a build. Turning on
# -print_pcs, which changes only what libFuzzer prints and maps, changed the inputs they
# found; with -use_cmp=0 it does not. The open-ended campaign keeps CMP mutations.
find_program(SETARCH setarch REQUIRED)

# Both passes read one copy of the corpora, taken before the first: a folder that changed
# between the passes (the generated FITS seeds, rewritten by another run of the suite's
# fixture) would make them differ for a reason that is not the fuzzer's.
file(REMOVE_RECURSE ${WORK}/corpora)
set(snapshots "")
set(index 0)
foreach(corpus ${CORPORA})
  file(MAKE_DIRECTORY ${WORK}/corpora/${index})
  file(GLOB inputs ${corpus}/*)
  if(inputs)
    file(COPY ${inputs} DESTINATION ${WORK}/corpora/${index})
  endif()
  list(APPEND snapshots ${WORK}/corpora/${index})
  math(EXPR index "${index} + 1")
endforeach()

set(found "")
foreach(pass 1 2)
  file(REMOVE_RECURSE ${WORK}/pass${pass})
  file(MAKE_DIRECTORY ${WORK}/pass${pass}/new ${WORK}/pass${pass}/artifacts)
  execute_process(
    COMMAND ${SETARCH} -R ${FUZZER} -seed=1 -runs=${RUNS} -reload=0 -use_cmp=0 -max_len=20000 -timeout=60 -rss_limit_mb=2048 -malloc_limit_mb=2048
            -print_final_stats=1 -artifact_prefix=${WORK}/pass${pass}/artifacts/ ${WORK}/pass${pass}/new ${snapshots}
    RESULT_VARIABLE status
    OUTPUT_VARIABLE output
    ERROR_VARIABLE output)
  # Kept beside the pass's inputs: when two passes differ, their logs show where.
  file(WRITE ${WORK}/pass${pass}/log "${output}")
  if(NOT status EQUAL 0)
    message(FATAL_ERROR "${FUZZER} failed (exit ${status}) on pass ${pass}:\n${output}")
  endif()
  string(REGEX MATCH "stat::number_of_executed_units: *[0-9]+" executed "${output}")
  file(GLOB units RELATIVE ${WORK}/pass${pass}/new ${WORK}/pass${pass}/new/*)
  list(SORT units)
  list(LENGTH units count)
  message(STATUS "pass ${pass}: ${executed}, ${count} new inputs")
  list(APPEND found "${units}")
  set(units_${pass} "${units}")
endforeach()
if(NOT "${units_1}" STREQUAL "${units_2}")
  message(FATAL_ERROR "two runs with -seed=1 -runs=${RUNS} found different inputs:\n${units_1}\nvs\n${units_2}")
endif()

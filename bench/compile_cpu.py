#!/usr/bin/python3
"""CPU-seconds of every compile and link step of a build, for comparing build costs on a
shared machine where wall times depend on who else is working.

As a launcher (no ccache: this replaces it), in a fresh build folder:
  cmake -S . -B build-cpu -G Ninja -DCMAKE_BUILD_TYPE=Release \
    "-DCMAKE_CXX_COMPILER_LAUNCHER=$PWD/bench/compile_cpu.py;$PWD/build-cpu/cpu.log" \
    "-DCMAKE_CXX_LINKER_LAUNCHER=$PWD/bench/compile_cpu.py;$PWD/build-cpu/cpu.log"
  cmake --build build-cpu -j2
Each step appends "user+system seconds<TAB>output file" to the log (the compiler's own
children included; this script's start-up is not).

Summary: bench/compile_cpu.py --sum build-cpu/cpu.log [TOP]
prints the TOP costliest steps, the total per target folder and the sum.
"""
import os
import resource
import subprocess
import sys


def launch(log, command):
    out = command[command.index("-o") + 1] if "-o" in command else command[-1]
    code = subprocess.call(command)
    use = resource.getrusage(resource.RUSAGE_CHILDREN)
    with open(log, "a") as f:
        f.write(f"{use.ru_utime + use.ru_stime:.3f}\t{out}\n")
    return code


def summarise(log, top):
    steps = {}
    for line in open(log):
        seconds, out = line.rstrip("\n").split("\t", 1)
        steps[out] = float(seconds)  # a step run twice keeps its last figure
    ranked = sorted(steps.items(), key=lambda s: -s[1])
    for out, seconds in ranked[:top]:
        print(f"{seconds:8.1f}  {out}")
    groups = {}
    for out, seconds in steps.items():
        key = out.split(".dir/")[0] if ".dir/" in out else "links"
        groups[key] = groups.get(key, 0.0) + seconds
    print("per target:")
    for key, seconds in sorted(groups.items(), key=lambda g: -g[1]):
        print(f"{seconds:8.1f}  {key}")
    print(f"{sum(steps.values()):8.1f}  total CPU-seconds over {len(steps)} steps")


if __name__ == "__main__":
    if len(sys.argv) >= 3 and sys.argv[1] == "--sum":
        summarise(sys.argv[2], int(sys.argv[3]) if len(sys.argv) > 3 else 30)
    elif len(sys.argv) >= 3:
        sys.exit(launch(os.path.abspath(sys.argv[1]), sys.argv[2:]))
    else:
        sys.exit(__doc__)

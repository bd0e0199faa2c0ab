"""Run a command and print its wall time and the peak resident memory of
its process (for tests/bench/bench.sh; getrusage of the children, in KiB
on Linux).  Usage: peak_rss.py COMMAND [ARG]...; exits with its status."""
import resource
import subprocess
import sys
import time

start = time.monotonic()
rc = subprocess.call(sys.argv[1:])
print("secs %.2f" % (time.monotonic() - start))
print("peak_kib %d" % resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)
sys.exit(rc)

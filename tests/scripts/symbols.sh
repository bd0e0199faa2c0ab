#!/bin/sh
# Every symbol the library exports carries the public prefix vg_ (house
# rule: one public prefix; everything else static).  Under AddressSanitizer
# the compiler adds one-definition-rule markers __odr_asan.vg_* for our own
# globals; they are the sanitizer's, named after ours, and are skipped.
B=${VG_BUILD:-build}
bad=$(nm -g --defined-only "$B/libvibrogate.a" 2>/dev/null | awk 'NF == 3 { print $3 }' | grep -v '^vg_' | grep -v '^__odr_asan\.vg_' | sort -u)
if [ -n "$bad" ]; then
    echo "FAIL: exported symbols without the vg_ prefix: $(echo $bad)"
else
    n=$(nm -g --defined-only "$B/libvibrogate.a" | awk 'NF == 3' | wc -l)
    [ "$n" -gt 0 ] && echo "PASS: all $n exported symbols start with vg_" || echo "FAIL: no symbols found in $B/libvibrogate.a"
fi

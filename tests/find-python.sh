#!/bin/sh
# Print the first python3 on PATH that imports astropy, numpy and scipy (Debian's own interpreter
# on a Debian machine; a python3 earlier on PATH may lack them). Exit 1 when there is none.
IFS=:
for dir in $PATH /usr/bin; do
  candidate="$dir/python3"
  [ -x "$candidate" ] || continue
  if "$candidate" -c 'import astropy, numpy, scipy' >/dev/null 2>&1; then
    printf '%s\n' "$candidate"
    exit 0
  fi
done
exit 1

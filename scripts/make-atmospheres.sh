#!/bin/sh
# Regenerate the shipped atmosphere profiles in atmospheres/ from the code:
# each file is exactly the output of `steamloft atmos NAME` for a built-in NAME.
#   scripts/make-atmospheres.sh [STEAMLOFT_BINARY] [DIRECTORY]
# (`make atmospheres` runs it; tests/cli/test_atmos.sh checks that the shipped
# files equal what this script writes.)
set -eu
bin=${1:-build/steamloft}
dir=${2:-atmospheres}
mkdir -p "$dir"
for name in $("$bin" atmos list | awk '{print $1}'); do
  "$bin" atmos "$name" > "$dir/.$name.txt.tmp"
  mv "$dir/.$name.txt.tmp" "$dir/$name.txt"
done

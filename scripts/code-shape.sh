#!/bin/sh
# code-shape: the shape of the code, from `make check` (DEVELOPERS.md,
# "Conventions").  Prints the lines of every command file (src/cmd_*.c) and
# the longest functions of src/, and fails when a command file has more
# than MAX_CMD_LINES lines: a command is argument
# parsing and one call into the library; the work belongs in a module.
#   scripts/code-shape.sh [SRCDIR]     (default: src)
#   TOP=N scripts/code-shape.sh        show the N longest functions (default 10)
set -u
src=${1:-src}
MAX_CMD_LINES=300
TOP=${TOP:-10}
status=0
echo "code-shape: lines per command file (limit $MAX_CMD_LINES)"
for f in "$src"/cmd_*.c; do
  n=$(wc -l <"$f")
  b=$(basename "$f")
  mark=""
  if [ "$n" -gt "$MAX_CMD_LINES" ]; then mark="  <- over the limit"; status=1; fi
  printf '  %5d %s%s\n' "$n" "$b" "$mark"
done
echo "code-shape: the $TOP longest functions in $src/"
# A function: a line '{' in column 0 after its signature, up to the next '}'
# in column 0 (the layout of this code base).  Name: the identifier before
# the first '(' of the signature's first line.
for f in "$src"/*.c; do
  awk -v file="$(basename "$f")" '
    /^[A-Za-z_].*\(/ && !/;[ \t]*$/ { sig = $0; sigline = NR }
    /^\{/ { if (sig != "") { start = NR; name = sig } }
    /^\}/ { if (start) { s = name; sub(/\(.*/, "", s); n = split(s, w, /[ \t*]+/);
                         printf "%d %s:%d %s\n", NR - start + 1, file, sigline, w[n]; start = 0; sig = "" } }
  ' "$f"
done | sort -rn | head -n "$TOP" | awk '{ printf "  %5d %s %s\n", $1, $3, $2 }'
[ "$status" -eq 0 ] && echo "code-shape: every command file is within $MAX_CMD_LINES lines" \
  || echo "code-shape: FAILED: a command file is over $MAX_CMD_LINES lines (move its work into a module)"
exit "$status"

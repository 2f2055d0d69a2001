#!/bin/sh
# The README check: every command in a fenced ```sh block of README.md runs,
# from a scratch folder, with exit status 0.
#
# The scratch folder looks like the top of the source tree to the commands:
# build/steamloft (and build-mpi/steamloft when an MPI build exists) are links
# to the binaries under test, examples/ and atmospheres/ are copies.  Commands
# run one by one, in order, with sh -e, so files made by one are there for the
# next.  Not run, with the reason printed:
#   - `make ...` lines: they build and test the tree this suite is part of
#     (`make check` would run this test again); the Makefile has its own tests;
#   - lines whose program is not installed (ncview, cdo, mpirun, ...), or that
#     need the MPI build when there is none: optional tools.
# As root, Open MPI needs OMPI_ALLOW_RUN_AS_ROOT(_CONFIRM)=1, the documented
# equivalent of mpirun's --allow-run-as-root; the README says so.
. "$(dirname "$0")/lib.inc"
readme="$SL_SRCDIR/README.md"
work="$SL_TMP/scratch"
mkdir -p "$work/build"
ln -s "$SL_BIN" "$work/build/steamloft"
cp -R "$SL_SRCDIR/examples" "$SL_SRCDIR/atmospheres" "$work/"
mpi_bin="$SL_SRCDIR/build-mpi/steamloft"
if [ -x "$mpi_bin" ]; then mkdir -p "$work/build-mpi"; ln -s "$mpi_bin" "$work/build-mpi/steamloft"; fi
if [ "$(id -u)" = 0 ]; then export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1; fi
export OMPI_MCA_btl_vader_single_copy_mechanism=none OMP_NUM_THREADS=1

# The commands: lines of ```sh blocks; a trailing backslash joins lines.
awk '/^```sh[ \t]*$/ {on = 1; next} /^```/ {on = 0; next}
     on { if (sub(/\\$/, "")) { acc = acc $0; next } print acc $0; acc = "" }' "$readme" \
  | sed 's/^[ \t]*//' | grep -v -e '^$' -e '^#' >"$SL_TMP/cmds.txt"
n=$(wc -l <"$SL_TMP/cmds.txt")
if [ "$n" -gt 0 ]; then sl_ok "README.md has $n fenced sh commands"; else sl_fail "no fenced sh commands in README.md"; fi

ran=0
while IFS= read -r cmd; do
  prog=${cmd%% *}
  case "$cmd" in
    make|make\ *) echo "# not run (a make line; it builds and tests this tree): $cmd"; continue ;;
  esac
  case "$cmd" in
    *build-mpi/*)
      if [ ! -x "$work/build-mpi/steamloft" ]; then
        echo "# not run (no MPI build; 'make MPI=1' makes build-mpi/steamloft): $cmd"; continue
      fi ;;
  esac
  case "$prog" in
    build/*|build-mpi/*|*=*) ;;
    *) if ! command -v "$prog" >/dev/null 2>&1; then
         echo "# not run ($prog is not installed, an optional tool): $cmd"; continue
       fi ;;
  esac
  ran=$((ran + 1))
  (cd "$work" && sh -ec "$cmd") </dev/null >"$SL_TMP/out" 2>"$SL_TMP/err"
  st=$?
  if [ "$st" -eq 0 ]; then sl_ok "README: $cmd"; else
    sl_fail "README: $cmd: exit $st"; sed 's/^/#   /' "$SL_TMP/err" | tail -5; fi
done <"$SL_TMP/cmds.txt"
if [ "$ran" -gt 0 ]; then sl_ok "$ran README commands ran"; else sl_fail "no README command ran"; fi
sl_done

#!/bin/sh
# The manual page and the bash completion made at build time from the
# program's own help texts (scripts/gen-man.sh, scripts/gen-completion.sh),
# and `make install` / `make uninstall` into a scratch DESTDIR.
#   - `man -l` shows the page without groff warnings, with every command of
#     `steamloft --help` and every long option of each command's --help;
#   - the completion (run by bash with COMP_WORDS as bash sets them) completes
#     `steamloft r<TAB>` to `run`, options and scenario keys;
#   - install puts binary, page, completion, README and examples in place;
#     uninstall removes them all.
# Without man (package man-db) or bash the checks that need them SKIP (exit 77
# when nothing else could be checked).
. "$(dirname "$0")/lib.inc"
build=$(dirname "$SL_BIN")
page="$build/steamloft.1"
compl="$build/steamloft.bash"
skipped=""

if [ -s "$page" ]; then sl_ok "the build made steamloft.1"; else sl_fail "no $page"; fi
if [ -s "$compl" ]; then sl_ok "the build made steamloft.bash"; else sl_fail "no $compl"; fi

"$SL_BIN" --help >"$SL_TMP/main.txt"
cmds=$(awk '/^Commands:/ {on = 1; next} on && /^$/ {exit} on {print $1}' "$SL_TMP/main.txt")

# ---- man page ---------------------------------------------------------------
if command -v man >/dev/null 2>&1; then
  MANWIDTH=120 man --warnings -l "$page" >"$SL_TMP/man.txt" 2>"$SL_TMP/man.err"
  st=$?
  if [ "$st" -eq 0 ] && [ ! -s "$SL_TMP/man.err" ]; then sl_ok "man -l shows the page without warnings"; else
    sl_fail "man -l: exit $st"; sed 's/^/#   /' "$SL_TMP/man.err" | head -5; fi
  # Plain text of the page (no overstrike) for the searches below.
  sed 's/.\x08//g' "$SL_TMP/man.txt" >"$SL_TMP/man.plain"
  sl_expect_grep "$SL_TMP/man.plain" "^STEAMLOFT(1)" "the page has its header"
  sl_expect_grep "$SL_TMP/man.plain" "^NAME" "the page has NAME"
  sl_expect_grep "$SL_TMP/man.plain" "screening estimate" "the page carries the caution"
  for c in $cmds; do
    # The section of command C: from its sub-heading to the next one.
    awk -v c="$c" '$0 ~ "^   " c "$" {on = 1; next} on && /^   [a-z]+$/ {exit} on' \
      "$SL_TMP/man.plain" >"$SL_TMP/sec.txt"
    [ "$c" = help ] && { [ -s "$SL_TMP/sec.txt" ] && sl_ok "man: help section" || sl_fail "man: no help section"; continue; }
    "$SL_BIN" "$c" --help 2>/dev/null | grep -o -- '--[a-z][a-z-]*' | sort -u >"$SL_TMP/opts.txt"
    miss=""
    while read -r o; do
      grep -q -- "$o" "$SL_TMP/sec.txt" || miss="$miss $o"
    done <"$SL_TMP/opts.txt"
    if [ -s "$SL_TMP/opts.txt" ] && [ -z "$miss" ]; then sl_ok "man: '$c' section has all $(wc -l <"$SL_TMP/opts.txt") options of '$c --help'"; else
      sl_fail "man: '$c' section lacks:$miss"; fi
  done
else
  skipped="$skipped man"
  echo "# SKIP man page display: man is not installed (package man-db)"
fi

# ---- bash completion --------------------------------------------------------
if command -v bash >/dev/null 2>&1; then
  # comp WORD...: the completions bash offers for the last word.
  comp() {
    bash -c '. "$1"; shift; COMP_WORDS=("$@"); COMP_CWORD=$((${#COMP_WORDS[@]} - 1)); _steamloft
             printf "%s\n" "${COMPREPLY[@]}"' comp "$compl" "$@" 2>&1
  }
  got=$(comp steamloft r)
  if [ "$got" = run ]; then sl_ok "steamloft r<TAB> completes to run"; else sl_fail "steamloft r<TAB> gives '$got'"; fi
  got=$(comp steamloft -q e | tr '\n' ' ')
  if [ "$got" = "ensemble " ]; then sl_ok "after a global option: e<TAB> -> ensemble"; else sl_fail "steamloft -q e<TAB> gives '$got'"; fi
  got=$(comp steamloft run --pl)
  if [ "$got" = "--plot" ]; then sl_ok "run --pl<TAB> -> --plot"; else sl_fail "run --pl<TAB> gives '$got'"; fi
  got=$(comp steamloft --ver)
  if [ "$got" = "--verbose
--version" ]; then sl_ok "--ver<TAB> -> the two global options"; else sl_fail "--ver<TAB> gives '$got'"; fi
  # Every scenario key of `steamloft params` is offered after --vary.
  "$SL_BIN" params | awk '/^\[[a-z_]+\]/ {s = substr($1, 2, length($1) - 2); next}
                          s != "" && /^  [a-z]/ {print s "." $1 "="}' | sort >"$SL_TMP/keys.txt"
  comp steamloft sweep x.ini --vary "" | sort >"$SL_TMP/ckeys.txt"
  if [ -s "$SL_TMP/keys.txt" ] && cmp -s "$SL_TMP/keys.txt" "$SL_TMP/ckeys.txt"; then
    sl_ok "--vary <TAB> offers all $(wc -l <"$SL_TMP/keys.txt") scenario keys"; else
    sl_fail "--vary <TAB> keys differ from steamloft params"; diff "$SL_TMP/keys.txt" "$SL_TMP/ckeys.txt" | head -5; fi
  got=$(comp steamloft sweep x.ini --vary impactor.diam)
  if [ "$got" = "impactor.diameter_m=" ]; then sl_ok "--vary impactor.diam<TAB> -> impactor.diameter_m="; else sl_fail "--vary key gives '$got'"; fi
  # Registered with bash's `complete` for the command name.
  reg=$(bash -c '. "$1"; complete -p steamloft' reg "$compl" 2>&1)
  if [ "$reg" = "complete -F _steamloft steamloft" ]; then sl_ok "complete -p steamloft: -F _steamloft"; else sl_fail "complete -p steamloft gives '$reg'"; fi
  got=$(comp steamloft run x.ini --set impactor.diam)
  if [ "$got" = "impactor.diameter_m=" ]; then sl_ok "run --set impactor.diam<TAB> -> impactor.diameter_m="; else sl_fail "run --set key gives '$got'"; fi
  got=$(comp steamloft run x.ini --force)
  if [ "$got" = "--force" ]; then sl_ok "run x.ini --force<TAB> -> --force (global options anywhere)"; else sl_fail "run x.ini --force<TAB> gives '$got'"; fi
  got=$(comp steamloft atmos --su | tr '\n' ' ')
  if [ "$got" = "--summary " ]; then sl_ok "atmos --su<TAB> -> --summary (no usage-line debris)"; else sl_fail "atmos --su<TAB> gives '$got'"; fi
  # Every option that takes a value in a command's --help has a value kind
  # in the completion (none dropped, e.g. the last of the list).
  miss=""
  for c in $cmds; do
    [ "$c" = help ] && continue
    "$SL_BIN" "$c" --help 2>/dev/null | awk '/^ +-/ { line = $0; sub(/^ +/, "", line); g = index(line, "  ");
        if (g) line = substr(line, 1, g - 1); n = split(line, w, /[ ,]+/); k = 0
        for (i = 1; i <= n; i++) { if (w[i] !~ /^-/) { if (w[i] ~ /^[A-Z]/) for (j = 1; j <= k; j++) print o[j]; break }
                                   if (w[i] !~ /^--?[a-z0-9][a-z0-9-]*$/) break; o[++k] = w[i] } }' |
      sort -u >"$SL_TMP/argopts.txt"
    while read -r o; do
      kind=$(bash -c '. "$1"; _steamloft_arg_kind "$2" "$3"' k "$compl" "$c" "$o")
      [ "$kind" = none ] && miss="$miss $c:$o"
    done <"$SL_TMP/argopts.txt"
  done
  if [ -z "$miss" ]; then sl_ok "every option with a value has a value kind in the completion"; else sl_fail "options without a kind:$miss"; fi
  got=$(comp steamloft decay --atmosphere subarctic-w)
  if [ "$got" = "subarctic-winter" ]; then sl_ok "--atmosphere completes built-in profiles"; else sl_fail "--atmosphere gives '$got'"; fi
else
  skipped="$skipped bash"
  echo "# SKIP completion: bash is not installed"
fi

# ---- make install / uninstall into a scratch DESTDIR -----------------------
if command -v make >/dev/null 2>&1 && [ -f "$SL_SRCDIR/Makefile" ]; then
  dest="$SL_TMP/dest"
  brel=${build#"$SL_SRCDIR"/}
  mk() { (cd "$SL_SRCDIR" && env -u MAKEFLAGS -u MFLAGS -u MAKELEVEL make -s --no-print-directory \
           BUILD="$brel" DESTDIR="$dest" PREFIX=/opt/sl "$@") >"$SL_TMP/mk.txt" 2>&1; }
  if mk install; then sl_ok "make install DESTDIR=... PREFIX=/opt/sl"; else
    sl_fail "make install"; sed 's/^/#   /' "$SL_TMP/mk.txt" | tail -5; fi
  p="$dest/opt/sl"
  for f in bin/steamloft share/man/man1/steamloft.1 share/bash-completion/completions/steamloft \
           share/doc/steamloft/README.md share/doc/steamloft/examples/demo.ini \
           share/steamloft/examples/demo.ini share/steamloft/atmospheres/README.md; do
    if [ -f "$p/$f" ]; then sl_ok "installed $f"; else sl_fail "not installed: $f"; fi
  done
  if cmp -s "$SL_BIN" "$p/bin/steamloft"; then sl_ok "the installed binary is the build's"; else sl_fail "installed binary differs"; fi
  sl_expect_grep "$p/share/man/man1/steamloft.1" "/opt/sl/share/steamloft/atmospheres" "the installed page names the install prefix"
  if mk uninstall; then sl_ok "make uninstall"; else sl_fail "make uninstall"; sed 's/^/#   /' "$SL_TMP/mk.txt" | tail -5; fi
  left=$(find "$dest" -type f | sed "s|^$dest/||")
  if [ -z "$left" ]; then sl_ok "uninstall removed every installed file"; else sl_fail "left after uninstall: $(echo $left | head -c 300)"; fi
  if [ ! -e "$p/share/steamloft" ] && [ ! -e "$p/share/doc/steamloft" ]; then sl_ok "uninstall removed the steamloft folders"; else
    sl_fail "steamloft folders left after uninstall"; fi
fi

# ---- each configuration in its own build folder ----------------------------
# `make -n` shows what make would run without running it: MPI=1 compiles with
# mpicc into build-mpi/, the default with cc into build/, so an MPI build after
# a serial one (or after make check) cannot find serial objects up to date.
if command -v make >/dev/null 2>&1 && [ -f "$SL_SRCDIR/Makefile" ]; then
  (cd "$SL_SRCDIR" && env -u MAKEFLAGS -u MFLAGS -u MAKELEVEL -u BUILD make -n -B MPI=1 build) >"$SL_TMP/n-mpi.txt" 2>&1
  if grep -q '^mpicc .* -o build-mpi/obj/main.o' "$SL_TMP/n-mpi.txt" && ! grep -q ' build/obj/' "$SL_TMP/n-mpi.txt"; then
    sl_ok "make MPI=1 compiles with mpicc into build-mpi/"; else sl_fail "make MPI=1 does not build into build-mpi/ with mpicc"; head -3 "$SL_TMP/n-mpi.txt" | sed 's/^/#   /'; fi
  (cd "$SL_SRCDIR" && env -u MAKEFLAGS -u MFLAGS -u MAKELEVEL -u BUILD make -n -B MPI=0 build) >"$SL_TMP/n-ser.txt" 2>&1
  if grep -q '^cc .* -o build/obj/main.o' "$SL_TMP/n-ser.txt" && ! grep -q 'build-mpi' "$SL_TMP/n-ser.txt"; then
    sl_ok "the serial build compiles with cc into build/"; else sl_fail "the serial build does not use build/"; head -3 "$SL_TMP/n-ser.txt" | sed 's/^/#   /'; fi
fi

# An MPI binary, when one was built, says so: the two cannot be mixed up.
if [ -x "$SL_SRCDIR/build-mpi/steamloft" ]; then
  "$SL_SRCDIR/build-mpi/steamloft" --version >"$SL_TMP/v-mpi.txt" 2>&1
  sl_expect_grep "$SL_TMP/v-mpi.txt" "^Build: MPI (make MPI=1)" "build-mpi/steamloft --version says MPI"
fi

if [ "$sl_n" -le 2 ] && [ -n "$skipped" ]; then
  echo "# SKIP:$skipped missing"
  exit 77
fi
sl_done

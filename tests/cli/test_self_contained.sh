#!/bin/sh
# The repository stands on its own: no file refers to notes or paths outside
# it (a person who clones it has only what is in it).  Checks every tracked
# and new file for paths that leave the tree and for the names of planning
# notes that never were part of it.  PRACTICE: our own rule.
. "$SL_SRCDIR/tests/cli/lib.inc"
cd "$SL_SRCDIR" || exit 1
if ! git rev-parse --git-dir >/dev/null 2>&1; then
  sl_skip "not a git checkout: the file list comes from git"; sl_done; exit $?
fi
# Patterns are split so that this file does not match itself.
pat_notes='DESIGN[.]md|impact-facts|climate-facts|ecosystem[.]md|style-anchors|[.][.]/sha''red|/sha''red/reference'
pat_abs='(^|[^A-Za-z0-9_.])/(work|home|root)/[A-Za-z0-9_]'
git ls-files -co --exclude-standard -z | xargs -0 grep -n -I -E -e "$pat_notes" -e "$pat_abs" \
  -- 2>/dev/null | grep -v '^tests/cli/test_self_contained.sh:' >"$SL_TMP/hits"
if [ -s "$SL_TMP/hits" ]; then
  sl_fail "files refer to paths outside the repository"; sed 's/^/#   /' "$SL_TMP/hits" | head -20
else
  sl_ok "no file refers to a path outside the repository"
fi
# A relative path that climbs out of the tree from where it is written.
root=$(realpath "$SL_SRCDIR")
git ls-files -co --exclude-standard | while read -r f; do
  grep -n -o -I -E '(^|[ "(`])(\.\./)+[A-Za-z0-9_][A-Za-z0-9_./-]*' "$f" 2>/dev/null | while IFS= read -r hit; do
    rel=$(printf '%s' "$hit" | sed -E 's/^[0-9]+:[ "(`]?//')
    dir=$(dirname "$f")
    target=$(cd "$dir" 2>/dev/null && realpath -m "$rel")
    case "$target" in "$root"|"$root"/*) ;; *) echo "$f: $rel" ;; esac
  done
done >"$SL_TMP/climb"
if [ -s "$SL_TMP/climb" ]; then
  sl_fail "relative paths that leave the repository"; sed 's/^/#   /' "$SL_TMP/climb" | head -20
else
  sl_ok "no relative path leaves the repository"
fi
sl_done

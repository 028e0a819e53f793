#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# Every language in po/LINGUAS translates every message of the sources listed in POTFILES.in,
# extracted afresh with the keywords of meson's glib preset: none untranslated, none fuzzy.
# usage: po-complete.sh SOURCE_ROOT
set -u
root="$1"
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT
cd "$root" || exit 1
xgettext --from-code=UTF-8 --add-comments --keyword=_ --keyword=N_ --keyword=C_:1c,2 \
  --keyword=NC_:1c,2 --keyword=g_dcgettext:2 --keyword=g_dngettext:2,3 --keyword=g_dpgettext2:2c,3 \
  -f po/POTFILES.in -o "$tmp/efflux.pot" || exit 1
status=0
for lang in $(grep -v '^#' po/LINGUAS); do
  msgmerge --quiet --no-fuzzy-matching -o "$tmp/$lang.po" "po/$lang.po" "$tmp/efflux.pot" || exit 1
  stats=$(LC_ALL=C msgfmt --check --statistics -o /dev/null "$tmp/$lang.po" 2>&1) || { echo "$lang: $stats"; status=1; continue; }
  echo "$lang: $stats"
  case "$stats" in
    *untranslated*|*fuzzy*)
      echo "$lang.po misses these messages:"
      msgattrib --only-fuzzy "$tmp/$lang.po" 2>/dev/null | grep '^msgid' | head -20
      msgattrib --untranslated "$tmp/$lang.po" | grep '^msgid' | head -20
      status=1 ;;
  esac
done
exit $status

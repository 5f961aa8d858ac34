#!/bin/sh
# check_manpage.sh - the manual page pacemap(1): it renders with man(1) /
# groff without warnings, `make install` puts it in place with the version
# of include/pacemap/version.h and `make uninstall` takes it away, and it
# keeps in step with the program: every command of `pacemap -h` and every
# option of each command's -h is in the page, and the page lists no option
# the program does not take.
#
# Run from the project root (make test does); PM_BIN names the binary.
PM=${PM_BIN:-build/pacemap}
PAGE=man/pacemap.1
pass=0
fail=0
TMP=$(mktemp -d) || exit 1
trap 'rm -rf "$TMP"' EXIT INT TERM
ok() { pass=$((pass + 1)); printf 'ok    %s\n' "$1"; }
bad() { fail=$((fail + 1)); printf 'FAIL  %s\n' "$1"; [ -s "$TMP/err" ] && sed 's/^/      /' "$TMP/err" | head -n 5; }

version=$(sed -n 's/^#define PM_VERSION "\(.*\)"/\1/p' include/pacemap/version.h)
sed "s/@VERSION@/$version/" "$PAGE" > "$TMP/pacemap.1"

# ---- it renders -------------------------------------------------------------
if command -v groff > /dev/null 2>&1; then
    groff -man -Tutf8 -ww -z "$TMP/pacemap.1" 2> "$TMP/err"
    [ ! -s "$TMP/err" ] && ok "groff renders the page without warnings" || bad "groff warns"
    groff -man -Tutf8 "$TMP/pacemap.1" 2> /dev/null | sed 's/.\x08//g' > "$TMP/page.txt"
    grep -q "pacemap $version" "$TMP/page.txt" && ok "the page carries version $version" ||
        bad "the page lacks version $version"
else
    echo "note: groff not installed (make deps): rendering checks skipped"
fi
if command -v man > /dev/null 2>&1; then
    MANWIDTH=80 man -l "$TMP/pacemap.1" > "$TMP/man.txt" 2> "$TMP/err" && grep -q 'EXIT STATUS' "$TMP/man.txt" &&
        ok "man -l reads the page" || bad "man -l cannot read the page"
fi

# ---- in step with -h ----------------------------------------------------------
# The options of one command in the page: its .SS section plus the common ones.
page_opts() {
    awk -v c="$1" '/^\.SS /{on = ($2 == c); next} /^\.S[HS] /{on = 0} on' "$PAGE" |
        sed 's/\\-/-/g' | grep -Eo -- '(^|[ "])--?[a-zA-Z][a-zA-Z-]*' | tr -d ' "' | sort -u
}
common="-h --help --json -q --quiet"
cmds=$("$PM" -h | awk '/^commands:/{on=1; next} on && NF {print $1}')
[ -n "$cmds" ] && ok "pacemap -h lists commands" || bad "pacemap -h lists no command"
for c in $cmds; do
    grep -q "^\.BI \"$c \" file" "$PAGE" && ok "page describes command $c" ||
        bad "page lacks command $c"
    "$PM" "$c" -h | awk '/^options:/{on=1; next} on' |
        grep -Eo -- '(^|[ ,])--?[a-zA-Z][a-zA-Z-]*' | tr -d ' ,' | sort -u > "$TMP/help"
    page_opts "$c" > "$TMP/page"
    for o in $(cat "$TMP/help"); do
        case " $common " in *" $o "*) continue ;; esac
        grep -qx -- "$o" "$TMP/page" && ok "page: $c $o" || bad "page lacks $c $o (see $c -h)"
    done
    for o in $(cat "$TMP/page"); do
        grep -qx -- "$o" "$TMP/help" && ok "program: $c $o" ||
            bad "page lists $c $o, which $c -h does not"
    done
done

# ---- make install / uninstall -------------------------------------------------
dest="$TMP/root"
if make --no-print-directory -s install DESTDIR="$dest" PREFIX=/usr BUILD="${PM_BUILD:-build}" \
        > "$TMP/err" 2>&1; then
    f="$dest/usr/share/man/man1/pacemap.1"
    [ -f "$f" ] && grep -q "pacemap $version" "$f" && ! grep -q '@VERSION@' "$f" &&
        ok "make install puts pacemap.1 in share/man/man1 with the version" ||
        bad "make install: no man page with the version"
    make --no-print-directory -s uninstall DESTDIR="$dest" PREFIX=/usr > "$TMP/err" 2>&1
    [ ! -e "$f" ] && ok "make uninstall removes the man page" || bad "make uninstall leaves it"
else
    bad "make install into a scratch root failed"
fi

echo "check_manpage: $pass passed, $fail failed"
[ "$fail" -eq 0 ]

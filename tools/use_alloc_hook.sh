#!/usr/bin/env bash
# use_alloc_hook.sh — route every allocation of the library through its hook (src/core/
# alloc.c): raw malloc, calloc, realloc, free and strdup calls in src/ (except the CLI in
# src/cli and alloc.c itself, which wraps the C library's) become sturdy_malloc,
# sturdy_calloc, sturdy_realloc, sturdy_free and sturdy_strdup, and a file that then
# uses the hook without including "core/core.h" gets that include in front of its first
# project include. Idempotent: run it again after merging work on the same files.
#   usage: tools/use_alloc_hook.sh [FILE...]     (default: every library .c and .h)
set -euo pipefail
cd "$(dirname "$0")/.."
if [ $# -eq 0 ]; then
    set -- $(ls src/*/*.c src/*/*.h | grep -v -e '^src/cli/' -e '^src/core/alloc\.c$')
fi
for f in "$@"; do
    # a call is the bare name (not a member, not part of a longer name) followed by "(";
    # twice, since a call nested right inside another one shares its "(" with it
    sed -E -i \
        -e 's/(^|[^A-Za-z0-9_.>])(malloc|calloc|realloc|free|strdup)[[:space:]]*\(/\1sturdy_\2(/g' \
        -e 's/(^|[^A-Za-z0-9_.>])(malloc|calloc|realloc|free|strdup)[[:space:]]*\(/\1sturdy_\2(/g' \
        "$f"
    if [ "$f" != src/core/core.h ] &&
       grep -qE '\bsturdy_(malloc|calloc|realloc|free|strdup|asprintf)\(' "$f" &&
       ! grep -q '^#include "core/core.h"' "$f"; then
        if grep -q '^#include "' "$f"; then
            sed -i '0,/^#include "/s//#include "core\/core.h"\n#include "/' "$f"
        else
            echo "$f: uses the allocation hook but has no project include to put core/core.h beside" >&2
            exit 1
        fi
    fi
done
# anything left over (e.g. a call split across lines) needs a hand edit
left=$(grep -nE '(^|[^A-Za-z0-9_.>])(malloc|calloc|realloc|free|strdup|strndup|aligned_alloc|posix_memalign|reallocarray)[[:space:]]*\(' \
       "$@" | grep -vE '^[^:]+:[0-9]+:\s*(/?\*|//)' || true)
if [ -n "$left" ]; then
    echo "raw allocation calls left:" >&2
    echo "$left" >&2
    exit 1
fi

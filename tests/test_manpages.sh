#!/usr/bin/env bash
# The manual pages the build wrote render without a warning: groff with every warning on
# (-ww), output discarded (-z), as issue 20 asks; any message fails. The gzipped copies that
# get installed hold the same text.
#
# usage: test_manpages.sh MAN_DIR
set -u
dir=$1
if ! command -v groff >/dev/null; then
    echo "groff is not installed (Debian: groff-base, which man-db pulls in)"
    exit 77
fi
status=0
n=0
for page in "$dir"/*.1; do
    n=$((n + 1))
    msgs=$(groff -ww -z -man "$page" 2>&1)
    if [[ -n $msgs ]]; then
        echo "FAIL: $page:"
        echo "$msgs"
        status=1
    fi
    if ! gzip -dc "$page.gz" | cmp -s - "$page"; then
        echo "FAIL: $page.gz does not hold $page"
        status=1
    fi
done
# tepid(1) and one page per verb: README.md's usage table lists ten verbs.
if ((n < 11)); then
    echo "FAIL: $n pages in $dir, expected tepid.1 and one per verb (at least 11)"
    status=1
fi
((status == 0)) && echo "ok: $n pages render without warnings"
exit $status

#!/usr/bin/env bash
# cells.sh — before/after timings of the cell-count path (issue 17, item 2): two sturdy
# binaries on the same designs, one thread, runs interleaved (A B A B ...) so that load
# on the shared machine falls on both alike; prints the median wall and CPU (user+sys)
# seconds of RUNS runs each, and the path each design gets (STURDY_PERM_PATH unset: the
# cost model's choice). Run bench/gen_designs.py first (make bench does).
# usage: bash bench/cells.sh OLD_BIN NEW_BIN [design ...]   (RUNS=5 by default)
set -eu
cd "$(dirname "$0")/.."
OLD=$1 NEW=$2; shift 2
RUNS=${RUNS:-5}
designs=${*:-"f3_200k f5_20k bal2000"}
export OPENBLAS_NUM_THREADS=1
declare -A Y=([bal2000]=hours [unbal2000]=hours [f5_20k]=latency_ms [f3_200k]=moisture)
declare -A F=([bal2000]=treatment,adhesive,cure [unbal2000]=treatment,adhesive,cure
              [f5_20k]=region,cache,codec,protocol,client
              [f3_200k]=site,probe,daytime)
declare -A BB=([bal2000]=9999 [unbal2000]=9999 [f5_20k]=999 [f3_200k]=999)
median() { sort -g | awk '{a[NR]=$1} END {print (NR%2 ? a[(NR+1)/2] : (a[NR/2]+a[NR/2+1])/2)}'; }
tmp=$(mktemp -d)
for d in $designs; do
    for tag in old new; do : > "$tmp/$d.$tag"; done
    for r in $(seq "$RUNS"); do
        for tag in old new; do
            bin=$OLD; [ $tag = new ] && bin=$NEW
            /usr/bin/time -f "%e %U %S" -o "$tmp/t" "$bin" check "bench/out/$d.csv" -y "${Y[$d]}" \
                -f "${F[$d]}" -B "${BB[$d]}" --bootstrap 0 --quiet --format json \
                -o "$tmp/$d.$tag.json" --threads 1
            cat "$tmp/t" >> "$tmp/$d.$tag"
        done
    done
    same=$(cmp -s "$tmp/$d.old.json" "$tmp/$d.new.json" && echo "JSON identical" || echo "JSON differs")
    for tag in old new; do
        w=$(awk '{print $1}' "$tmp/$d.$tag" | median)
        c=$(awk '{print $2 + $3}' "$tmp/$d.$tag" | median)
        printf '%-8s %-4s B=%-5s runs=%s median wall %8.2f s  median cpu %8.2f s\n' \
            "$d" "$tag" "${BB[$d]}" "$RUNS" "$w" "$c"
        eval "w_$tag=$w c_$tag=$c"
    done
    awk -v a="$w_old" -v b="$w_new" -v c="$c_old" -v e="$c_new" -v d="$d" -v s="$same" \
        'BEGIN {printf "%-8s old/new: wall %.2fx, cpu %.2fx; %s\n", d, a / b, c / e, s}'
done
echo "load average $(cut -d' ' -f1-3 /proc/loadavg) after the run"
rm -rf "$tmp"

#!/usr/bin/env bash
# Whole-process timings of `plateau report` (issue 6, item 4): one example with and without the
# PDF, the typst compile alone, and a batch of generated studies (the batch command on their
# folder, and for comparison one process per study with `xargs -P`). Uses hyperfine when it is
# installed, else a loop over `date +%s%N`. Every run passes --force, so nothing is skipped as
# current.
#
#   scripts/bench.sh                 build the release binary, then time everything
#   RUNS=10 BATCH=100 BATCH_RUNS=3 SEQUENTIAL=1 scripts/bench.sh   (SEQUENTIAL=1 adds -j 1)
#   PLATEAU_BIN=path/to/plateau scripts/bench.sh   time a binary already built (no build)
#
# Honours CARGO_TARGET_DIR. Typst is taken from $PLATEAU_TYPST, then `typst` on the PATH,
# then ~/.cargo/bin/typst.
set -euo pipefail

root=$(cd "$(dirname "$0")/.." && pwd)
runs=${RUNS:-10}
batch=${BATCH:-100}
batch_runs=${BATCH_RUNS:-3}
jobs=$(nproc)

if [[ -z ${PLATEAU_BIN:-} ]]; then
    (cd "$root" && cargo build --release --quiet)
    bin=${CARGO_TARGET_DIR:-$root/target}/release/plateau
else
    bin=$PLATEAU_BIN
fi
typst=${PLATEAU_TYPST:-$(command -v typst || echo "$HOME/.cargo/bin/typst")}
[[ -x $bin ]] || { echo "bench.sh: no plateau binary at $bin" >&2; exit 1; }
[[ -x $typst ]] || { echo "bench.sh: no typst binary at $typst" >&2; exit 1; }
export PLATEAU_TYPST=$typst

work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

# median_of NAME RUNS CMD [WARMUP]: prints the median wall time in seconds of CMD over RUNS
# runs, after WARMUP untimed runs (default 1).
median_of() {
    local name=$1 n=$2 cmd=$3 warmup=${4:-1}
    if command -v hyperfine >/dev/null; then
        hyperfine --style none --warmup "$warmup" --runs "$n" --export-json "$work/$name.json" \
            "$cmd" >/dev/null
        python3 -c 'import json,sys; print("%.4f" % json.load(open(sys.argv[1]))["results"][0]["median"])' \
            "$work/$name.json"
    else
        for ((i = 0; i < warmup; i++)); do bash -c "$cmd" >/dev/null 2>&1; done
        local times=() t0 t1
        for ((i = 0; i < n; i++)); do
            t0=$(date +%s%N)
            bash -c "$cmd" >/dev/null 2>&1
            t1=$(date +%s%N)
            times+=($((t1 - t0)))
        done
        printf '%s\n' "${times[@]}" | sort -n | awk '{a[NR]=$1} END {
            m = (NR % 2) ? a[(NR + 1) / 2] : (a[NR / 2] + a[NR / 2 + 1]) / 2; printf "%.4f\n", m / 1e9 }'
    fi
}

example=$root/examples/hplc-assay/study.yaml

# (a) One example end to end, plateau alone, and typst alone on the Typst source plateau wrote.
"$bin" report "$example" -o "$work/one" --no-pdf >/dev/null
t_pdf=$(median_of report-pdf "$runs" "'$bin' report --force '$example' -o '$work/pdf'")
t_nopdf=$(median_of report-nopdf "$runs" "'$bin' report --force '$example' -o '$work/nopdf' --no-pdf")
t_typst=$(median_of typst "$runs" "cd '$work/one' && '$typst' compile report.typ '$work/typst.pdf'")

# (b) A batch of generated studies: the four examples in turn, each copy with its results
# shifted by a small amount so no two studies are the same.
examples=("$root"/examples/*/study.yaml)
for ((i = 0; i < batch; i++)); do
    src=$(dirname "${examples[i % ${#examples[@]}]}")
    dst=$work/batch/s$i
    mkdir -p "$dst"
    cp "$src"/study.yaml "$dst"/
    for extra in "$src"/*; do
        [[ -f $extra && $extra != */study.yaml && $extra != */results.csv ]] && cp "$extra" "$dst"/
    done
    awk -F, -v OFS=, -v d="$i" 'NR == 1 { print; next }
        { for (c = 2; c <= NF; c++) if ($c ~ /^-?[0-9.]+$/) {
              dec = index($c, ".") ? length($c) - index($c, ".") : 0
              $c = sprintf("%." dec "f", $c + (d % 7 - 3) * 10 ^ -dec) }
          print }' "$src"/results.csv >"$dst"/results.csv
done
find "$work/batch" -name study.yaml | sort >"$work/list"
for s in $(cat "$work/list"); do "$bin" check "$s" >/dev/null || { echo "bench.sh: generated $s does not check" >&2; exit 1; }; done

t_batch=$(median_of batch "$batch_runs" "'$bin' report --force -q '$work/batch'" 0)
t_xargs=$(median_of batch-xargs "$batch_runs" "xargs -P $jobs -I{} '$bin' report --force -q {} <'$work/list'" 0)
t_seq=nan
if [[ ${SEQUENTIAL:-0} == 1 ]]; then
    t_seq=$(median_of batch-seq "$batch_runs" "'$bin' report --force -q -j 1 '$work/batch'" 0)
fi

model=$(lscpu | sed -n 's/^Model name: *//p' | head -n 1)
tool=$(command -v hyperfine >/dev/null && echo "hyperfine $(hyperfine --version | cut -d' ' -f2)" || echo "date loop")
cat <<EOF

machine: $model, $jobs cores (nproc), $(uname -sr)
plateau $("$bin" --version | cut -d' ' -f2), $("$typst" --version | head -n 1), timed with $tool
medians of $runs runs (single study) and $batch_runs runs (batch of $batch)

case                                              median
report hplc-assay with PDF                        $(printf '%8.3f s' "$t_pdf")
report hplc-assay --no-pdf (plateau's own time)   $(printf '%8.3f s' "$t_nopdf")
typst compile of its report.typ alone             $(printf '%8.3f s' "$t_typst")
plateau report FOLDER ($batch studies, -j $jobs)         $(printf '%8.3f s' "$t_batch")
$batch processes, xargs -P $jobs                         $(printf '%8.3f s' "$t_xargs")
$([[ $t_seq == nan ]] || printf 'plateau report -j 1 FOLDER (%s studies)            %8.3f s' "$batch" "$t_seq")

EOF
python3 - "$t_pdf" "$t_nopdf" "$t_typst" "$t_batch" "$t_xargs" "$t_seq" "$batch" "$jobs" <<'PY'
import math, sys
pdf, nopdf, typst, batch_t, xargs_t, seq = map(float, sys.argv[1:7])
batch, jobs = int(sys.argv[7]), int(sys.argv[8])
print(f"plateau's own time / typst compile time: {100 * nopdf / typst:.1f} % (target < 10 %)")
bound = batch / jobs * pdf * 1.3
for name, t in (("plateau report FOLDER", batch_t), (f"xargs -P {jobs}", xargs_t)):
    print(f"{name}: {t:.2f} s; target (batch/cores) x single x 1.3 = {bound:.2f} s: "
          + ("met" if t <= bound else "not met"))
if not math.isnan(seq):
    print(f"-j 1: {seq:.2f} s = {seq / batch:.3f} s per study")
PY

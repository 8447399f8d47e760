#!/usr/bin/env bash
# Side-by-side timings of runcal and a straightforward numpy/scipy/pandas reference
# (bench/reference_impl.py) doing the same work, measured in one run on this machine:
#
#   (a) fit all four models on the Databank full history (whole process)
#   (b) a 10,000-resample bootstrap of the Pythagorean log-loss exponent on the full history
#   (c) aggregate and fit a simulated 5,000,000-game log; also against a bare csv-crate scan
#   (d) runcal eras: every rolling 10-season window of the Databank with 1,000 bootstrap resamples
#       each (runcal only; the criterion bench `eras_databank` measures the computation alone)
#
# Not part of the test suite. From a fresh clone it builds runcal in release, creates a Python venv
# in target/bench-venv with the versions pinned in bench/requirements.txt, installs GNU time if
# /usr/bin/time is missing (apt-get), and writes the game log to target/bench-data (about 330 MB).
# Timings are medians of REPS runs (default 5) for runcal and the scan, one run for Python; peak
# memory is GNU time's "Maximum resident set size". Other work on the machine skews the numbers:
# the load average is printed before and after.
#
# Usage: bash bench/compare.sh        (REPS=9 bash bench/compare.sh for steadier medians;
#        RUNCAL=/path/to/runcal bash bench/compare.sh measures another build of runcal)
set -euo pipefail
cd "$(dirname "${BASH_SOURCE[0]}")/.."

REPS=${REPS:-5}
OUT=target/bench-data
VENV=target/bench-venv
mkdir -p "$OUT"

note() { printf '%s\n' "$*" >&2; }

# ---------------------------------------------------------------- tools
if ! /usr/bin/time -v true >/dev/null 2>&1; then
    note "installing GNU time (apt-get install -y time)"
    sudo=""
    [ "$(id -u)" = 0 ] || sudo="sudo"
    $sudo apt-get install -y time >/dev/null 2>&1 ||
        { $sudo apt-get update >/dev/null && $sudo apt-get install -y time >/dev/null; }
fi
note "building runcal and the csv scan (release)"
cargo build --release --quiet --bin runcal --example scan_csv
RUNCAL=${RUNCAL:-target/release/runcal}
SCAN=target/release/examples/scan_csv

if [ ! -x "$VENV/bin/python" ]; then
    note "creating $VENV"
    python3 -m venv "$VENV"
fi
want=$(sha256sum bench/requirements.txt | cut -d' ' -f1)
if [ "$(cat "$VENV/.requirements.sha256" 2>/dev/null)" != "$want" ]; then
    note "installing bench/requirements.txt into $VENV"
    "$VENV/bin/pip" install --quiet --disable-pip-version-check -r bench/requirements.txt
    echo "$want" >"$VENV/.requirements.sha256"
fi
PY="$VENV/bin/python"

# ---------------------------------------------------------------- data
TEAMS=tests/data/databank-teams.csv
MAPS=(--map season=yearID --map league=lgID --map team=teamID --map runs_scored=R)
GAMES=$OUT/games5m.csv
if [ ! -s "$GAMES" ]; then
    # 30 clubs play 30*162/2 = 2430 games a season; 2058 seasons make 5,000,940 games.
    note "simulating $GAMES"
    "$RUNCAL" simulate --teams 30 --seasons 2058 --games 162 --game-log --seed 1 --out "$GAMES" -q
fi

# ---------------------------------------------------------------- measuring
# seconds NAME REPS CMD...: median wall-clock seconds of REPS runs; the last run's stdout is kept in
# $OUT/NAME.out.
seconds() {
    local name=$1 reps=$2 t0 t1 i
    shift 2
    local times=()
    for ((i = 0; i < reps; i++)); do
        t0=$EPOCHREALTIME
        "$@" >"$OUT/$name.out"
        t1=$EPOCHREALTIME
        times+=("$(awk -v a="$t0" -v b="$t1" 'BEGIN { printf "%.6f", b - a }')")
    done
    printf '%s\n' "${times[@]}" | sort -g | awk '{ v[NR] = $1 } END { print v[int((NR + 1) / 2)] }'
}

# peak_kib NAME CMD...: GNU time's maximum resident set size (KiB) of one run.
peak_kib() {
    local name=$1
    shift
    /usr/bin/time -v -o "$OUT/$name.time" "$@" >"$OUT/$name.out"
    awk -F': ' '/Maximum resident set size/ { print $2 }' "$OUT/$name.time"
}

# timed_once NAME CMD...: wall seconds and peak KiB of a single run, as "seconds kib".
timed_once() {
    local name=$1 t0 t1 kib
    shift
    t0=$EPOCHREALTIME
    kib=$(peak_kib "$name" "$@")
    t1=$EPOCHREALTIME
    echo "$(awk -v a="$t0" -v b="$t1" 'BEGIN { printf "%.6f", b - a }') $kib"
}

note "cores: $(nproc); load before: $(cut -d' ' -f1-3 /proc/loadavg)"

note "(a) four fits, runcal x$REPS"
A_RC_KIB=$(peak_kib a_runcal "$RUNCAL" fit "$TEAMS" "${MAPS[@]}" --model all --format json -q)
A_RC=$(seconds a_runcal "$((REPS * 4))" "$RUNCAL" fit "$TEAMS" "${MAPS[@]}" --model all --format json -q)
note "(a) four fits, Python"
read -r A_PY A_PY_KIB < <(timed_once a_python "$PY" bench/reference_impl.py fit4 "$TEAMS")

note "(b) bootstrap, runcal x$REPS"
B_ARGS=(fit "$TEAMS" "${MAPS[@]}" --bootstrap 10000 --seed 1 --no-references --format json -q)
B_RC_KIB=$(peak_kib b_runcal "$RUNCAL" "${B_ARGS[@]}")
B_RC=$(seconds b_runcal "$REPS" "$RUNCAL" "${B_ARGS[@]}")
note "(b) bootstrap, Python (takes a while)"
read -r B_PY B_PY_KIB < <(timed_once b_python "$PY" bench/reference_impl.py bootstrap "$TEAMS" 10000 1)

note "(c) 5M-game log, runcal and csv scan x$REPS"
C_RC_KIB=$(peak_kib c_runcal "$RUNCAL" fit "$GAMES" --games --format json -q --no-references)
C_RC=$(seconds c_runcal "$REPS" "$RUNCAL" fit "$GAMES" --games --format json -q --no-references)
C_SCAN=$(seconds c_scan "$REPS" "$SCAN" "$GAMES")
note "(c) 5M-game log, pandas"
read -r C_PY C_PY_KIB < <(timed_once c_python "$PY" bench/reference_impl.py games "$GAMES")

note "(d) era windows, runcal x$REPS"
D_ARGS=(eras "$TEAMS" "${MAPS[@]}" --window 10 --bootstrap 1000 --seed 1 --format json -q)
D_RC_KIB=$(peak_kib d_runcal "$RUNCAL" "${D_ARGS[@]}")
D_RC=$(seconds d_runcal "$REPS" "$RUNCAL" "${D_ARGS[@]}")

note "load after: $(cut -d' ' -f1-3 /proc/loadavg)"

# ---------------------------------------------------------------- report
"$PY" - "$OUT" <<EOF
import json, sys
out = sys.argv[1]
load = lambda name: json.load(open(f"{out}/{name}.out"))
a_rc, a_py = $A_RC, $A_PY
b_rc, b_py = $B_RC, $B_PY
c_rc, c_py, c_scan = $C_RC, $C_PY, $C_SCAN
d_rc = $D_RC
d_windows = len(load("d_runcal")["windows"])
mib = lambda kib: kib / 1024

# The same work: the answers must agree.
rc = {f["model"]: list(f["params"].values()) for f in load("a_runcal")["fits"] if f["fitted"]}
py = {m: v["params"] for m, v in load("a_python").items()}
a_agree = max(abs(r - p) / abs(p) for m in rc for r, p in zip(rc[m], py[m]))
b = load("b_runcal")["fits"][0]
pb = load("b_python")
c = load("c_runcal")
pc = load("c_python")
assert c["rows_used"] == pc["team_seasons"], (c["rows_used"], pc["team_seasons"])
c_agree = abs(c["fits"][0]["params"]["exponent"] - pc["exponent"]) / pc["exponent"]

def verdict(ok):
    return "met" if ok else "**missed**"

rows = [
    ("(a) fit 4 models, Databank 1871-2020 (whole process)",
     f"{a_rc * 1000:.1f} ms", f"{a_py * 1000:.0f} ms", f"{a_py / a_rc:.0f}x",
     "runcal < 20 ms", verdict(a_rc < 0.020)),
    ("(b) bootstrap, 10,000 resamples, pythagorean log-loss",
     f"{b_rc:.3f} s", f"{b_py:.2f} s", f"{b_py / b_rc:.0f}x",
     ">= 50x and runcal < 0.3 s", verdict(b_py / b_rc >= 50 and b_rc < 0.3)),
    ("(c) aggregate + fit 5,000,940-game log vs pandas",
     f"{c_rc:.3f} s", f"{c_py:.2f} s", f"{c_py / c_rc:.1f}x",
     ">= 15x", verdict(c_py / c_rc >= 15)),
    ("(c) same, throughput vs bare csv ByteRecord scan",
     f"{c_rc:.3f} s", f"scan {c_scan:.3f} s", f"{100 * c_scan / c_rc:.0f}%",
     ">= 60% of the scan", verdict(c_scan / c_rc >= 0.60)),
    ("(c) same, peak memory (max RSS)",
     f"{mib($C_RC_KIB):.1f} MiB", f"{mib($C_PY_KIB):.0f} MiB", f"{$C_PY_KIB / $C_RC_KIB:.0f}x less",
     "runcal < 32 MiB", verdict($C_RC_KIB < 32 * 1024)),
    (f"(d) eras: {d_windows} rolling 10-season windows x 1,000 resamples (whole process)",
     f"{d_rc:.3f} s", "-", "-", "runcal < 1 s", verdict(d_rc < 1.0)),
]
print("| workload | runcal | numpy/scipy/pandas | ratio | target | |")
print("|---|---|---|---|---|---|")
for r in rows:
    print("| " + " | ".join(r) + " |")
print()
print(f"peak memory: (a) runcal {mib($A_RC_KIB):.1f} MiB, Python {mib($A_PY_KIB):.0f} MiB; "
      f"(b) runcal {mib($B_RC_KIB):.1f} MiB, Python {mib($B_PY_KIB):.0f} MiB; "
      f"(d) runcal {mib($D_RC_KIB):.1f} MiB")
print(f"agreement: (a) largest relative parameter difference {a_agree:.1e}; "
      f"(c) exponent {c_agree:.1e}, {c['rows_used']} team-seasons both")
print(f"(b) 95% interval of the exponent: runcal {b['ci']['exponent'][0]:.4f}-{b['ci']['exponent'][1]:.4f}, "
      f"Python {pb['ci'][0]:.4f}-{pb['ci'][1]:.4f} (different random streams)")
EOF

#!/usr/bin/env bash
# Side-by-side timings of runcal and straightforward Python references doing the same work, measured
# in one run on this machine and printed as ONE table of ratios against the targets:
#
#   (a) fit all four models on the Databank full history (whole process) vs numpy/scipy
#   (b) 10,000-resample bootstraps on the full history: the Pythagorean log-loss exponent vs numpy/
#       scipy, then every model with team and with season resampling, and --model all
#   (c) aggregate and fit a simulated 5,000,940-game log vs pandas and polars (whole process, and
#       polars' compute time after its import), vs a bare single-threaded csv-crate scan, peak memory
#   (d) runcal eras: every rolling 10-season window of the Databank with 1,000 resamples each
#   (e) runcal outlook: 10,000 simulated rests of a 30-club season vs a numpy vectorised reference
#       (bench/outlook_reference.py)
#
# Not part of the test suite. From a fresh clone it builds runcal in release, creates a Python venv
# in target/bench-venv with the versions pinned in bench/requirements.txt (numpy, scipy, statsmodels,
# pandas, polars), installs GNU time if /usr/bin/time is missing (apt-get), and writes the game log
# to target/bench-data (about 330 MB). Timings are medians of REPS runs (default 5; SLOW_REPS,
# default 3, for runs over a second) for runcal and the scan, one run for Python; peak memory is GNU
# time's "Maximum resident set size". Other work on the machine skews the numbers, so the table's
# last column is the 1-minute load average when each measurement began.
#
# Usage: bash bench/compare.sh        (REPS=9 bash bench/compare.sh for steadier medians;
#        RUNCAL=/path/to/runcal bash bench/compare.sh measures another build of runcal)
set -euo pipefail
cd "$(dirname "${BASH_SOURCE[0]}")/.."

REPS=${REPS:-5}
SLOW_REPS=${SLOW_REPS:-3}
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

# ---------------------------------------------------------------- host speed
# The same single-threaded pure-Python work on every run, so two runs' tables can be told apart
# by the host's speed (a shared virtual machine's varies) before their times are compared.
HOST_LOOP=$("$PY" -c '
import time
t = time.perf_counter()
s = 0
for i in range(10**7):
    s += i
print(f"{time.perf_counter() - t:.2f}")')

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

load1() { cut -d' ' -f1 /proc/loadavg; }
note "cores: $(nproc); load before: $(cut -d' ' -f1-3 /proc/loadavg)"
LOADS=()

note "(a) four fits, runcal x$REPS"
LOADS+=("a=$(load1)")
A_RC_KIB=$(peak_kib a_runcal "$RUNCAL" fit "$TEAMS" "${MAPS[@]}" --model all --format json -q)
A_RC=$(seconds a_runcal "$((REPS * 4))" "$RUNCAL" fit "$TEAMS" "${MAPS[@]}" --model all --format json -q)
note "(a) four fits, Python"
read -r A_PY A_PY_KIB < <(timed_once a_python "$PY" bench/reference_impl.py fit4 "$TEAMS")

note "(b) bootstrap, runcal x$REPS"
LOADS+=("b=$(load1)")
B_ARGS=(fit "$TEAMS" "${MAPS[@]}" --bootstrap 10000 --seed 1 --no-references --format json -q)
B_RC_KIB=$(peak_kib b_runcal "$RUNCAL" "${B_ARGS[@]}")
B_RC=$(seconds b_runcal "$REPS" "$RUNCAL" "${B_ARGS[@]}")
note "(b) bootstrap, Python (takes a while)"
read -r B_PY B_PY_KIB < <(timed_once b_python "$PY" bench/reference_impl.py bootstrap "$TEAMS" 10000 1)
# Every model, both resamplings: "model/resample=seconds@load" entries.
BM=()
for model in pythagorean pythagenpat pythagenport linear all; do
    for resample in team season; do
        reps=$REPS
        if [ "$model" = linear ] || [ "$model" = all ]; then
            reps=$SLOW_REPS
        fi
        note "(b) $model, $resample resampling, runcal x$reps"
        l=$(load1)
        t=$(seconds "b_${model}_$resample" "$reps" "$RUNCAL" fit "$TEAMS" "${MAPS[@]}" --model "$model" \
            --bootstrap 10000 --resample "$resample" --seed 1 --no-references --format json -q)
        BM+=("$model/$resample=$t@$l")
    done
done

note "(c) 5M-game log, runcal and csv scan x$REPS"
LOADS+=("c=$(load1)")
C_RC_KIB=$(peak_kib c_runcal "$RUNCAL" fit "$GAMES" --games --format json -q --no-references)
C_RC=$(seconds c_runcal "$REPS" "$RUNCAL" fit "$GAMES" --games --format json -q --no-references)
C_SCAN=$(seconds c_scan "$REPS" "$SCAN" "$GAMES")
note "(c) 5M-game log, pandas"
read -r C_PY C_PY_KIB < <(timed_once c_python "$PY" bench/reference_impl.py games "$GAMES")
note "(c) 5M-game log, polars"
read -r C_PL C_PL_KIB < <(timed_once c_polars "$PY" bench/reference_impl.py games-polars "$GAMES")

note "(d) era windows, runcal x$REPS"
LOADS+=("d=$(load1)")
D_ARGS=(eras "$TEAMS" "${MAPS[@]}" --window 10 --bootstrap 1000 --seed 1 --format json -q)
D_RC_KIB=$(peak_kib d_runcal "$RUNCAL" "${D_ARGS[@]}")
D_RC=$(seconds d_runcal "$REPS" "$RUNCAL" "${D_ARGS[@]}")

note "(e) outlook, runcal x$REPS and numpy"
LOADS+=("e=$(load1)")
E_GAMES=$OUT/outlook30.csv
"$RUNCAL" simulate --teams 30 --seasons 1 --games 162 --first-season 2026 --game-log --seed 3 \
    --out "$E_GAMES" -q
E_ARGS=(outlook "$E_GAMES" --as-of 2026-06-21 --exponent 1.83 --regress-games 55 --format json -q)
E_RC=$(seconds e_runcal "$REPS" "$RUNCAL" "${E_ARGS[@]}")
read -r E_PY E_PY_KIB < <(timed_once e_python "$PY" bench/outlook_reference.py "$E_GAMES" 2026-06-21 1.83 55 10000 1)

note "load after: $(cut -d' ' -f1-3 /proc/loadavg)"

# ---------------------------------------------------------------- report
"$PY" - "$OUT" "${LOADS[@]}" -- "${BM[@]}" <<EOF
import json, sys
out = sys.argv[1]
args = sys.argv[2:]
split = args.index("--")
loads = dict(a.split("=") for a in args[:split])
boot = {}
for entry in args[split + 1:]:
    key, value = entry.split("=")
    seconds, load = value.split("@")
    boot[key] = (float(seconds), load)
load = lambda name: json.load(open(f"{out}/{name}.out"))
a_rc, a_py = $A_RC, $A_PY
b_rc, b_py = $B_RC, $B_PY
c_rc, c_py, c_pl, c_scan = $C_RC, $C_PY, $C_PL, $C_SCAN
d_rc = $D_RC
e_rc, e_py = $E_RC, $E_PY
d_windows = len(load("d_runcal")["windows"])
mib = lambda kib: kib / 1024

# The same work: the answers must agree.
rc = {f["model"]: list(f["params"].values()) for f in load("a_runcal")["fits"] if f["fitted"]}
py = {m: v["params"] for m, v in load("a_python").items()}
a_agree = max(abs(r - p) / abs(p) for m in rc for r, p in zip(rc[m], py[m]))
b = load("b_runcal")["fits"][0]
pb = load("b_python")
c = load("c_runcal")
pc, pl = load("c_python"), load("c_polars")
for ref in (pc, pl):
    assert c["rows_used"] == ref["team_seasons"], (c["rows_used"], ref["team_seasons"])
c_agree = max(abs(c["fits"][0]["params"]["exponent"] - r["exponent"]) / r["exponent"] for r in (pc, pl))
c_pl_compute = pl["compute_seconds"]
er, ep = load("e_runcal"), load("e_python")
assert er["games_left"] == ep["games_left"], (er["games_left"], ep["games_left"])

def verdict(ok):
    return "met" if ok else "**missed**"

rows = [
    ("(a) fit 4 models, Databank 1871-2020 (whole process)",
     f"{a_rc * 1000:.1f} ms", f"numpy/scipy {a_py * 1000:.0f} ms", f"{a_py / a_rc:.0f}x",
     "runcal < 20 ms", verdict(a_rc < 0.020), loads["a"]),
    ("(b) bootstrap, 10,000 resamples, pythagorean log-loss",
     f"{b_rc:.3f} s", f"numpy/scipy {b_py:.2f} s", f"{b_py / b_rc:.0f}x",
     ">= 50x and runcal < 0.3 s", verdict(b_py / b_rc >= 50 and b_rc < 0.3), loads["b"]),
]
for model in ("pythagorean", "pythagenpat", "pythagenport", "linear", "all"):
    for resample in ("team", "season"):
        t, l = boot[f"{model}/{resample}"]
        limit = 1.0 if model == "all" else 0.3
        name = "--model all" if model == "all" else model
        # Beside each the fixed exponent's own time on the same resampling: a ratio that a
        # slower or busier host changes far less than the times.
        fixed = boot[f"pythagorean/{resample}"][0]
        ref, ratio = ("-", "-") if model == "pythagorean" else (
            f"fixed exponent {fixed:.3f} s", f"{t / fixed:.1f}x its time")
        rows.append((f"(b) bootstrap 10,000, {name}, {resample} resampling",
                     f"{t:.3f} s", ref, ratio, f"runcal < {limit} s", verdict(t < limit), l))
rows += [
    ("(c) aggregate + fit 5,000,940-game log vs pandas",
     f"{c_rc:.3f} s", f"pandas {c_py:.2f} s", f"{c_py / c_rc:.1f}x",
     ">= 15x", verdict(c_py / c_rc >= 15), loads["c"]),
    ("(c) same vs polars, whole process",
     f"{c_rc:.3f} s", f"polars {c_pl:.2f} s", f"{c_pl / c_rc:.1f}x",
     ">= 3x", verdict(c_pl / c_rc >= 3), loads["c"]),
    ("(c) same vs polars' compute (after import)",
     f"{c_rc:.3f} s", f"polars {c_pl_compute:.2f} s", f"{c_pl_compute / c_rc:.2f}x",
     ">= 1.5x", verdict(c_pl_compute / c_rc >= 1.5), loads["c"]),
    ("(c) same vs a bare single-threaded csv ByteRecord scan",
     f"{c_rc:.3f} s", f"scan {c_scan:.3f} s", f"{c_scan / c_rc:.2f}x",
     "faster than the scan (> 1x)", verdict(c_scan / c_rc > 1.0), loads["c"]),
    ("(c) same, peak memory (max RSS)",
     f"{mib($C_RC_KIB):.1f} MiB", f"pandas {mib($C_PY_KIB):.0f}, polars {mib($C_PL_KIB):.0f} MiB",
     f"{$C_PL_KIB / $C_RC_KIB:.0f}x less than polars",
     "runcal <= 32 MiB", verdict($C_RC_KIB <= 32 * 1024), loads["c"]),
    (f"(d) eras: {d_windows} rolling 10-season windows x 1,000 resamples (whole process)",
     f"{d_rc:.3f} s", "-", "-", "runcal < 1 s", verdict(d_rc < 1.0), loads["d"]),
    (f"(e) outlook: 30 clubs, {er['games_left']} games left, 10,000 seasons (whole process)",
     f"{e_rc:.3f} s", f"numpy {e_py:.2f} s", f"{e_py / e_rc:.0f}x",
     ">= 20x and runcal < 0.5 s", verdict(e_py / e_rc >= 20 and e_rc < 0.5), loads["e"]),
]
print("| workload | runcal | reference | ratio | target | | load |")
print("|---|---|---|---|---|---|---|")
for r in rows:
    print("| " + " | ".join(r) + " |")
print()
print(f"{sum(r[5] == 'met' for r in rows)} of {len(rows)} targets met; 2 cores; "
      f"polars {pl['polars']}; load column: 1-minute load average as each measurement began.")
print(f"host speed: a single-threaded pure-Python loop of 10^7 additions took $HOST_LOOP s "
      "(the same loop on every run: compare it between runs before comparing times)")
print(f"peak memory: (a) runcal {mib($A_RC_KIB):.1f} MiB, Python {mib($A_PY_KIB):.0f} MiB; "
      f"(b) runcal {mib($B_RC_KIB):.1f} MiB, Python {mib($B_PY_KIB):.0f} MiB; "
      f"(d) runcal {mib($D_RC_KIB):.1f} MiB")
print(f"agreement: (a) largest relative parameter difference {a_agree:.1e}; "
      f"(c) exponent {c_agree:.1e} (pandas and polars), {c['rows_used']} team-seasons each")
print(f"(b) 95% interval of the exponent: runcal {b['ci']['exponent'][0]:.4f}-{b['ci']['exponent'][1]:.4f}, "
      f"Python {pb['ci'][0]:.4f}-{pb['ci'][1]:.4f} (different random streams)")
clubs = {x["team"]: x for x in er["clubs"]}
dc = max(abs(clubs[t]["chance_first"] - v) for t, v in zip(ep["teams"], ep["chance_first"]))
print(f"(e) first-place chances of runcal and numpy within {dc:.3f} (different random streams)")
EOF

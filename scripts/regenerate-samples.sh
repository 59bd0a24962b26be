#!/bin/sh
# Make every shipped simulated sample again from its own header comments (line file, state, faults, noise,
# seed) and its frequency grid (points, first and last frequency), with the coldtrace built from this tree:
#
#   cargo build --release && scripts/regenerate-samples.sh [BINARY]
#
# Run it from the crate root when the simulator's arithmetic changes on purpose, then look at what moved
# (`git diff --stat sample-sweeps`) and say so where the change is recorded. It replaces the files in
# sample-sweeps/ and nothing else; a sample whose header does not say how it was made is left alone and
# named. `cargo test` never calls this; tests/cli_harmonic_sample.rs checks that the harmonic sample is what
# its documented command makes. Exit codes: 0 all made, 1 a sample failed or was skipped, 2 bad use.
set -u

bin=${1:-./target/release/coldtrace}
if [ ! -x "$bin" ]; then
    echo "$0: no coldtrace binary at $bin: run cargo build --release first, or give its path" >&2
    exit 2
fi
status=0
for f in sample-sweeps/north-fridge/*.s1p sample-sweeps/north-fridge/fleet/*.s1p; do
    [ -f "$f" ] || continue
    head=$(grep -m1 '^! simulated by coldtrace' "$f")
    if [ -z "$head" ]; then
        echo "$f: no '! simulated by coldtrace' header: left as it is" >&2
        status=1
        continue
    fi
    unit=$(grep -m1 '^#' "$f" | awk '{ print toupper($2) }')
    if [ "$unit" != "GHZ" ]; then
        echo "$f: its frequencies are not in GHz (option line '# $unit ...'): left as it is" >&2
        status=1
        continue
    fi
    line=$(echo "$head" | sed -E 's/.*\((.*)\), state.*/\1/')
    state=$(echo "$head" | sed -E 's/.*state (warm|cold).*/\1/')
    noise=$(grep -m1 '^! noise' "$f" | sed -E 's/^! noise ([^ ]+) dB.*/\1/')
    seed=$(grep -m1 '^! noise' "$f" | sed -E 's/.*seed ([0-9]+).*/\1/')
    grid=$(awk '!/^[!#]/ && NF { n++; if (n == 1) a = $1; b = $1 } END { print n, a, b }' "$f")
    set -- $grid
    points=$1 start=$2 stop=$3
    # The faults, one --fault each (their specs hold no spaces).
    faults=$(grep '^! fault ' "$f" | sed 's/^! fault /--fault /' | tr '\n' ' ')
    # shellcheck disable=SC2086
    if "$bin" simulate "$line" --state "$state" --start "${start}GHz" --stop "${stop}GHz" \
        --points "$points" --noise-db "$noise" --seed "$seed" $faults -o "$f" --force -q >/dev/null; then
        echo "$f: $line, $state, $points points $start-$stop GHz, noise $noise dB, seed $seed $faults"
    else
        echo "$f: simulate failed" >&2
        status=1
    fi
done
exit $status

#!/usr/bin/env bash
# The measured firmware figures of docs/performance.md, from one place:
# instructions per reading and per load on the emulated Cortex-M0 and
# Cortex-M4F (`examples/firmware/run.sh cost m0|m4f`), the pipeline
# binary's flash and RAM (its ELF sections, read with readelf) and its peak
# stack on the M0 (`run.sh stack`). QEMU runs with -icount, so the counts
# are deterministic for a given compiler and source: CI runs this with
# --check and fails when the file is not current.
#
#   bash scripts/perf-figures.sh           rewrite the generated blocks in place
#   bash scripts/perf-figures.sh --check   exit 1 (with a diff) if they are stale
#
# Needs what run.sh needs: the Rust targets thumbv6m-none-eabi and
# thumbv7em-none-eabihf, qemu-system-arm, and readelf (binutils). Takes
# about three minutes on two cores, most of it the stack search's builds.
# The blocks are the text between `<!-- BEGIN GENERATED: NAME -->` and
# `<!-- END GENERATED: NAME -->`; everything else in the file is prose and
# is left alone.
set -euo pipefail
cd "$(dirname "$0")/.."

mode=write
case "${1:-}" in
"") ;;
--check) mode=check ;;
*)
    echo "usage: bash scripts/perf-figures.sh [--check]" >&2
    exit 2
    ;;
esac

doc=docs/performance.md
run=examples/firmware/run.sh
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

measure() {
    # measure NAME COMMAND...: output to $work/NAME, build log shown on failure.
    local name="$1"
    shift
    if ! "$@" >"$work/$name" 2>"$work/$name.log"; then
        cat "$work/$name.log" >&2
        echo "perf-figures: '$*' failed" >&2
        exit 1
    fi
}

echo "perf-figures: measuring (cost m0, cost m4f, pipeline, stack)..." >&2
measure m0 bash "$run" cost m0
measure m4f bash "$run" cost m4f
measure pipeline bash "$run" pipeline m4f
measure stack bash "$run" stack

target_dir="${CARGO_TARGET_DIR:-target}/firmware"
rustc_version=$(rustc --version | awk '{ print $2 }')
qemu_version=$(qemu-system-arm --version | awk 'NR == 1 { print $4 }')

# The cost output: "name  ticks  instructions" rows under "#" headings.
# Prints "section<TAB>name<TAB>instructions".
rows() {
    awk '
        /^# lc-core cost/ { section = "stage"; next }
        /^# full readings/ { section = "reading"; next }
        /^# loading/ { section = "load"; next }
        /^#/ || /^path / || /^calibration:/ || /^empty loop:/ { next }
        NF >= 3 && $(NF - 1) ~ /^[0-9]+$/ && $NF ~ /^[0-9.]+$/ {
            name = $1
            for (i = 2; i <= NF - 2; i++) name = name " " $i
            printf "%s\t%s\t%s\n", section, name, $NF
        }' "$1"
}
rows "$work/m0" >"$work/m0.rows"
rows "$work/m4f" >"$work/m4f.rows"
if ! cut -f1,2 "$work/m0.rows" | cmp -s - <(cut -f1,2 "$work/m4f.rows"); then
    echo "perf-figures: the M0 and M4F runs list different paths" >&2
    exit 1
fi
[ -s "$work/m0.rows" ] || {
    echo "perf-figures: no figures in the cost output" >&2
    exit 1
}

table() {
    # table SECTION HEADING: the two cores side by side.
    echo "| $2 | Cortex-M0 | Cortex-M4F |"
    echo "|---|---:|---:|"
    paste "$work/m0.rows" "$work/m4f.rows" | awk -F '\t' -v s="$1" '
        $1 == s {
            name = $2
            gsub(/\|/, "\\|", name)
            printf "| %s | %s | %s |\n", name, $3, $6
        }'
}

ratio() {
    # ratio LABEL FIXED F32: fixed over f32 on each core, and one fifth of f32 on the M0.
    paste "$work/m0.rows" "$work/m4f.rows" | awk -F '\t' -v label="$1" -v a="$2" -v b="$3" '
        $2 == a { fm0 = $3; fm4 = $6 }
        $2 == b { gm0 = $3; gm4 = $6 }
        END {
            if (fm0 == "" || gm0 == "") { print "missing path: " a " or " b > "/dev/stderr"; exit 1 }
            printf "| %s | **%.3f** | %.1f | %.2f |\n", label, fm0 / gm0, gm0 / 5, fm4 / gm4
        }'
}

{
    echo "Instructions per reading, empty loop subtracted (stages: 4096 readings of"
    echo "eight count pairs; full readings: the committed demo images):"
    echo
    table stage "stage"
    echo
    table reading "full reading"
    echo
    echo "Fixed over \`f32\` (the goal: at most 0.2 on the M0):"
    echo
    echo "| reading | Cortex-M0 | one fifth of \`f32\`, M0 | Cortex-M4F |"
    echo "|---|---:|---:|---:|"
    ratio "shift, configured gate (f32: s only, division)" "fixed shift, configured gate" "f32 s only, division"
    ratio "proximity, T given" "fixed proximity: pair + T -> gap" "f32 proximity: pair + T -> gap"
    ratio "proximity with the NTC conversion" "fixed proximity: pair + NTC -> gap" "f32 proximity: pair + NTC (logf)"
    ratio "proximity, 32-node cubic curve, T given" "fixed proximity (32 cubic): pair + T -> gap" "f32 proximity (32 cubic): pair + T -> gap"
    ratio "proximity, 32-node cubic curve, NTC" "fixed proximity (32 cubic): pair + NTC -> gap" "f32 proximity (32 cubic): pair + NTC (logf)"
    ratio "level, T given" "fixed level: 2 pairs + T -> level, volume" "f32 level: 2 pairs + T -> level, volume"
    ratio "level with the NTC conversion" "fixed level: 2 pairs + NTC code -> level, volume" "f32 level: 2 pairs + NTC code (logf) -> ..."
    ratio "metal" "fixed metal: pair + ring count -> class" "f32 metal: pair + ring count -> class"
    ratio "NTC conversion alone" "fixed NTC Beta: code -> 0.01 degC" "f32 NTC Beta: code -> degC (logf)"
    echo
    echo "Loading, once per start-up (64 calls each), instructions per call:"
    echo
    table load "call"
    echo
    echo "Measured with rustc $rustc_version and QEMU $qemu_version."
} >"$work/cost.md"

section_sizes() {
    # section_sizes ELF: ".vector_table .text .rodata .data .bss" sizes in bytes
    # (readelf prints them in hex; any awk, so no strtonum).
    local out="" hex
    for s in .vector_table .text .rodata .data .bss; do
        hex=$(readelf -SW "$1" | awk -v s="$s" '{ for (i = 1; i <= NF; i++) if ($i == s) { print $(i + 4); exit } }')
        out="$out $((16#${hex:-0}))"
    done
    echo "$out"
}
{
    echo "| core | flash (text + rodata + vectors) | .vector_table | .text | .rodata | .data | .bss |"
    echo "|---|---:|---:|---:|---:|---:|---:|"
    for pair in "Cortex-M0 thumbv6m-none-eabi" "Cortex-M4F thumbv7em-none-eabihf"; do
        set -- $pair
        elf="$target_dir/$2/release/pipeline"
        [ -f "$elf" ] || {
            echo "perf-figures: $elf was not built" >&2
            exit 1
        }
        read -r vt tx ro da bs < <(section_sizes "$elf")
        echo "| $1 | $((vt + tx + ro + da)) | $vt | $tx | $ro | $da | $bs |"
    done
    echo
    peak=$(sed -n 's/.*at most \([0-9]*\) bytes (fails with \([0-9]*\)).*/\1 \2/p' "$work/stack")
    [ -n "$peak" ] || {
        echo "perf-figures: no peak in the stack output" >&2
        exit 1
    }
    set -- $peak
    echo "Peak stack of the pipeline on the Cortex-M0: **$1 bytes** (a stack of $2 bytes faults)."
    echo
    echo "Measured with rustc $rustc_version."
} >"$work/footprint.md"

# Replace each block's body in a copy of the document.
replace() {
    # replace NAME FILE < doc > doc'
    awk -v name="$1" -v body="$2" '
        $0 == "<!-- BEGIN GENERATED: " name " -->" {
            print
            while ((getline line < body) > 0) print line
            skip = 1
            found = 1
            next
        }
        $0 == "<!-- END GENERATED: " name " -->" { skip = 0 }
        !skip { print }
        END { if (!found) { print "perf-figures: no block " name > "/dev/stderr"; exit 1 } }'
}
replace "firmware cost" "$work/cost.md" <"$doc" >"$work/doc.1"
replace "firmware footprint" "$work/footprint.md" <"$work/doc.1" >"$work/doc.2"

# The section sizes move by a few bytes with the checkout's path: cargo
# hashes a path dependency's location into its crate identity, and the
# symbol names it gives can shift code alignment (4 bytes between two clones
# seen). The check therefore takes the sizes within FOOTPRINT_SLACK bytes and
# everything else, instruction counts and peak stack included, exactly.
FOOTPRINT_SLACK=64
sizes_of() {
    # The size table rows of the footprint block, one number a field.
    awk '/^<!-- BEGIN GENERATED: firmware footprint -->$/ { on = 1; next }
         /^<!-- END GENERATED: firmware footprint -->$/ { on = 0 }
         on && /^\| Cortex-/ { print }' "$1"
}
without_sizes() {
    awk '/^<!-- BEGIN GENERATED: firmware footprint -->$/ { on = 1 }
         /^<!-- END GENERATED: firmware footprint -->$/ { on = 0 }
         !(on && /^\| Cortex-/) { print }' "$1"
}
if [ "$mode" = check ]; then
    stale=no
    if ! diff -u <(without_sizes "$doc") <(without_sizes "$work/doc.2"); then
        stale=yes
    fi
    if ! paste -d '\n' <(sizes_of "$doc") <(sizes_of "$work/doc.2") | awk -F '|' -v slack="$FOOTPRINT_SLACK" '
        NR % 2 == 1 { for (i = 1; i <= NF; i++) a[i] = $i; n = NF; next }
        {
            off = (NF != n)
            for (i = 3; i <= NF; i++) {
                d = a[i] - $i
                if (d < 0) d = -d
                if (d > slack) off = 1
            }
            if (off) { bad = 1; print "footprint: committed" a[2] "differs by more than " slack " B from" $0 > "/dev/stderr" }
        }
        END { exit bad }'; then
        stale=yes
    fi
    if [ "$(sizes_of "$doc" | wc -l)" != "$(sizes_of "$work/doc.2" | wc -l)" ]; then
        stale=yes
    fi
    if [ "$stale" = yes ]; then
        echo "perf-figures: $doc is not current; run: bash scripts/perf-figures.sh" >&2
        exit 1
    fi
    echo "perf-figures: $doc is current (section sizes within $FOOTPRINT_SLACK B)" >&2
else
    cp "$work/doc.2" "$doc"
    echo "perf-figures: $doc updated" >&2
fi

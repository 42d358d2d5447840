#!/usr/bin/env bash
# The bash completion as a user meets it: source the generated script in bash, fill COMP_WORDS
# as bash does for a line, call the completion function and compare the candidates with what
# the documentation says the command line accepts.
#
# usage: test_completion.sh COMPLETION_SCRIPT TEPID_EXE   (run from the source directory)
set -u

script=$1
tepid=$2
failures=0

# shellcheck source=/dev/null
source "$script" || { echo "FAIL: cannot source $script"; exit 1; }

# complete WORD...: the line's words, the last being the one under the cursor; they are split
# at '=' as bash does (COMP_WORDBREAKS has it: "--csv=F" is "--csv" "=" "F"). Prints the
# candidates sorted, one per line.
complete_words()
{
    local COMP_WORDS=("$tepid") COMP_CWORD COMPREPLY=() w rest
    local COMP_LINE="$tepid $*"
    local COMP_POINT=${#COMP_LINE}
    for w in "$@"; do
        while [[ $w == *=* ]]; do
            [[ -n ${w%%=*} ]] && COMP_WORDS+=("${w%%=*}")
            COMP_WORDS+=("=")
            w=${w#*=}
        done
        [[ -n $w ]] && COMP_WORDS+=("$w")
    done
    COMP_CWORD=$((${#COMP_WORDS[@]} - 1))
    _tepid "$tepid" "${COMP_WORDS[COMP_CWORD]}" "${COMP_WORDS[COMP_CWORD - 1]}" 2>/dev/null
    if ((${#COMPREPLY[@]})); then printf '%s\n' "${COMPREPLY[@]}" | LC_ALL=C sort; fi
}

# check WHAT EXPECTED WORD...: EXPECTED is the sorted candidate list, space separated.
check()
{
    local what=$1 expected=$2 got
    shift 2
    got=$(complete_words "$@" | tr '\n' ' ')
    got=${got% }
    if [[ $got == "$expected" ]]; then
        echo "ok: $what"
    else
        echo "FAIL: $what"
        echo "  line:     tepid $*"
        echo "  expected: $expected"
        echo "  got:      $got"
        failures=$((failures + 1))
    fi
}

demo=configs/workshop-bed-24v.yaml

# Verbs: the usage table of README.md lists warmup as the only verb starting with "war".
check "tepid war<TAB>" "warmup" war
check "tepid help st<TAB>" "steady" help st
check "tepid co<TAB>" "cool" co
check "tepid cool F --f<TAB>" "--from" cool "$demo" --f

# Options: README.md and docs/user-guide.md give warmup --plot F; no other warmup option or
# common option (--set, -q/--quiet, --help) starts with --pl.
check "tepid warmup --pl<TAB>" "--plot" warmup "$demo" --pl
check "tepid warmup --pl<TAB> before the file" "--plot" warmup --pl
# An option that is not repeatable is not offered twice (docs/user-guide.md: outputs once).
check "tepid warmup F --plot a.png --pl<TAB>" "" warmup "$demo" --plot a.png --pl
# --set repeats ("--set key.path=value (repeatable)", README.md).
check "tepid warmup F --set a=1 --se<TAB>" "--set" warmup "$demo" --set a=1 --se
# The config is found after options with values, in either form, for its list items.
check "tepid warmup --set a=1 --csv=o.csv F --set bed.layers.pl<TAB>" \
    "bed.layers.plate.contact= bed.layers.plate.material= bed.layers.plate.size= bed.layers.plate.thickness=" \
    warmup --set a=1 --csv=o.csv "$demo" --set bed.layers.plate.
check "tepid warmup F --csv=<TAB> lists files" "$(cd configs && printf 'configs/%s ' * | sed 's/ $//')" \
    warmup "$demo" --csv=configs/

# Key paths after --set: the heater keys of docs/user-guide.md's key table (layer, power,
# supply, resistance, tempco, reference, max_duty, supply_resistance, rated_power,
# rated_voltage) and heater.pattern's
# border and border_share (docs/grid.md), each followed by '=' for the value.
heater="heater.layer= heater.max_duty= heater.pattern.border= heater.pattern.border_share="
heater+=" heater.power= heater.rated_power= heater.rated_voltage= heater.reference="
heater+=" heater.resistance= heater.supply="
heater+=" heater.supply_resistance= heater.tempco="
check "tepid warmup F --set heater.<TAB>" "$heater" warmup "$demo" --set heater.
check "tepid warmup --set heater.<TAB> without a file" "$heater" warmup --set heater.
# List items are named by the ids in the file: workshop-bed-24v.yaml has a layer 'plate'
# (configs/workshop-bed-24v.yaml); layer keys per docs/user-guide.md (material, thickness,
# size, contact).
check "tepid warmup F --set bed.layers.plate.<TAB>" \
    "bed.layers.plate.contact= bed.layers.plate.material= bed.layers.plate.size= bed.layers.plate.thickness=" \
    warmup "$demo" --set bed.layers.plate.
# --vary, --spread and --free take numbers only (docs/sweep.md, docs/fit.md): no heater.layer,
# and a pair (heater.pattern has none, bed.size has) by element.
check "tepid sweep F --vary heater.s<TAB>" "heater.supply= heater.supply_resistance=" \
    sweep "$demo" --vary heater.s
check "tepid sweep F --spread bed.si<TAB>" "bed.size.0= bed.size.1=" sweep "$demo" --spread bed.si
check "tepid sweep F --vary heater.l<TAB>" "" sweep "$demo" --vary heater.l
# --free KEY[=LO:HI]: the bounds are optional, so no '=' is added.
check "tepid fit F --free heater.res<TAB>" "heater.resistance" fit "$demo" --free heater.res

# File names: the config (YAML files and directories), and the files of --log and outputs.
check "tepid warmup configs/workshop-bed-24<TAB>" "$demo" warmup configs/workshop-bed-24
check "tepid fit F --log configs/workshop-bed-24v-l<TAB>" "configs/workshop-bed-24v-log.csv" \
    fit "$demo" --log configs/workshop-bed-24v-l
check "tepid warmup F --csv=configs/workshop-bed-24v-l<TAB>" "configs/workshop-bed-24v-log.csv" \
    warmup "$demo" --csv=configs/workshop-bed-24v-l

if ((failures)); then
    echo "$failures completion check(s) failed"
    exit 1
fi

#!/bin/sh
# Records the bundled drill log, sample-incidents/drill-warehouse-fire.log,
# with the clock of an invented scenario: the first two hours of the
# Eastgate warehouse fire (sample-incidents/warehouse-fire.yaml, started
# 02:47 UTC). Every event goes through `oddsboard record --at`, so each is
# checked against the state before it exactly as a live one would be.
#
# The proposals (by "oddsboard") are the ones the planner made when the
# drill was first played; they are kept as recorded so the story stays the
# same whatever later versions of the solver would propose.
#
# Usage: sh sample-incidents/drill-warehouse-fire.sh [OUT.log]
# (OUT must not exist; ODDSBOARD names the binary, default `oddsboard`.)
set -eu
here=$(dirname "$0")
out=${1:-$here/drill-warehouse-fire.log}
ob=${ODDSBOARD:-oddsboard}
day=2026-03-09

"$ob" start "$here/warehouse-fire.yaml" --log "$out" --by ic --at "${day}T02:47:00Z" >/dev/null

rec() { # rec HH:MM:SS BY EVENT
    "$ob" record "$out" "$3" --by "$2" --at "${day}T$1Z" >/dev/null
}

rec 02:49:40 ic '{kind: note, text: "Invented scenario. First-due units on scene; one worker reported missing in the cold store"}'
rec 02:51:05 oddsboard '{kind: plan_proposed, moves: [{unit: E14, from: null, to: rescue-cold-store}, {unit: E15, from: defensive-south, to: rescue-cold-store}, {unit: E23, from: null, to: attack-dock}, {unit: W34, from: null, to: water-supply}, {unit: W35, from: null, to: water-supply}, {unit: R52, from: null, to: rescue-cold-store}]}'
rec 02:52:30 ic '{kind: plan_accepted, moves: [{unit: E14, from: null, to: rescue-cold-store}, {unit: E15, from: defensive-south, to: rescue-cold-store}, {unit: E23, from: null, to: attack-dock}, {unit: W34, from: null, to: water-supply}, {unit: W35, from: null, to: water-supply}, {unit: R52, from: null, to: rescue-cold-store}]}'
rec 02:53:10 ic '{kind: pinned, unit: R51, task: rescue-cold-store}'
rec 03:06:25 radio '{kind: unit_lost, unit: E12, reason: pump failure}'
rec 03:11:50 radio '{kind: unit_rerated, unit: W34, trait: supply, mean: 550.0, sd: 200.0}'
rec 03:12:35 radio '{kind: note, text: Shuttle route partly blocked at the estate gate}'
rec 03:13:05 oddsboard '{kind: plan_proposed, moves: [{unit: E17, from: defensive-south, to: attack-dock}]}'
rec 03:15:20 ic '{kind: plan_rejected}'
rec 03:22:45 radio '{kind: unit_added, unit: {id: E31, type: engine}}'
rec 03:24:10 ic '{kind: moved, unit: E31, to: attack-dock}'
rec 03:31:30 ops '{kind: need_changed, task: water-supply, trait: supply, need: 3400.0, sd: 300.0}'
rec 03:32:00 oddsboard '{kind: plan_proposed, moves: []}'
rec 03:33:40 ic '{kind: plan_accepted, moves: []}'
rec 03:52:15 ic '{kind: task_closed, task: rescue-cold-store, outcome: succeeded}'
rec 03:53:00 ic '{kind: note, text: Missing worker found and out; crews withdrawn from the cold store}'
rec 04:07:35 radio '{kind: unit_status, unit: E14, status: out_of_service}'
rec 04:12:20 ic '{kind: task_closed, task: salvage-offices, outcome: cancelled}'
rec 04:12:50 oddsboard '{kind: plan_proposed, moves: [{unit: E15, from: null, to: defensive-south}]}'
rec 04:15:05 ic '{kind: plan_accepted, moves: [{unit: E15, from: null, to: defensive-south}]}'
rec 04:28:40 ic '{kind: task_closed, task: attack-dock, outcome: failed}'
rec 04:29:30 ic '{kind: note, text: "Roof over the dock unsafe; interior attack abandoned, defensive operations only"}'
rec 04:44:10 ic '{kind: task_closed, task: exposure-tyres, outcome: succeeded}'

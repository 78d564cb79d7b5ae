#!/bin/sh
# Regenerates the worked study of docs/design.md (run from the repository root; about a minute).
# Every number it writes is a model prediction; the reference filters are the invented "Larkhill" examples.
set -e
OUT=${1:-docs/design/study}
CVD=${CVD:-.venv/bin/cvdfilter}
$CVD design --observer deuteranomalous --maximise red_green_gain --maximise luminous_transmittance \
    --require road_use.suitable --require "iso12312_category<=1" --require "white_shift<=0.01" \
    --require "discriminable_pairs.lost[normal]<=60" --family notch:k=2 --budget 3000 --seed 1 --top 8 \
    --dpi 150 -o "$OUT"

#!/bin/sh
# Regenerates the example figures shown in docs/figures.md (run from the repository root).
# Every filter here is an invented "Larkhill Optics Bench" design; every figure is a model prediction.
set -e
OUT=${1:-docs/figures}
CVD=${CVD:-.venv/bin/cvdfilter}
mkdir -p "$OUT"
$CVD figure spectrum larkhill-notch-575 larkhill-double-notch --observer normal \
    --observer deuteranomalous:shift=8 -o "$OUT/spectrum.png" --dpi 150
$CVD figure chromaticity larkhill-notch-575 --observer deuteranope --surfaces chart24 \
    -o "$OUT/chromaticity.png" --dpi 150
$CVD figure chromaticity larkhill-notch-575 --observer protanope --surfaces chart24 --space xy2015 \
    -o "$OUT/chromaticity-xy.png" --dpi 150
$CVD figure gains larkhill-notch-575 larkhill-double-notch larkhill-rose-tint larkhill-grey-reference \
    -o "$OUT/gains.png" --dpi 150
$CVD figure hues larkhill-notch-575 larkhill-double-notch -o "$OUT/hues.png" --dpi 150
$CVD figure hues larkhill-notch-575 larkhill-double-notch --illuminant FL2 --chart radial \
    -o "$OUT/hues-radial.png" --dpi 150
$CVD figure swatches larkhill-notch-575 --observer deuteranope -o "$OUT/swatches.png" --dpi 150
$CVD figure images larkhill-notch-575 --observer deuteranope -o "$OUT/images.png" --dpi 150
$CVD figure sweep "notch:center=530..620/5,fwhm=30,depth=0.8" --width double -o "$OUT/sweep.png" --dpi 110
$CVD figure sweep "notch:center=530..620/10,fwhm=20..50/10,depth=0.8" --observer normal \
    --observer deuteranope --observer protanomalous:shift=8 --width double -o "$OUT/sweep-2d.png" --dpi 110
$CVD figure tasks larkhill-notch-575 larkhill-rose-tint larkhill-grey-reference --width double -o "$OUT/tasks.png" \
    --dpi 110
$CVD figure population larkhill-notch-575 larkhill-rose-tint --observer deuteranomalous:n=200,seed=7 \
    --observer protanomalous:n=200,seed=7 -o "$OUT/population.png" --dpi 150

#!/usr/bin/env bash
# lantern plot (issue 22): the demo's flat LCDM posterior overlaid with the
# binned Pantheon 2018 one (Scolnic et al. 2018; ../shared/data) and with a
# plain CSV of weighted draws written by numpy, in one matrix; the same from
# a FITS table (astropy.io.fits); and the refusals, each naming its source.
. "$(dirname "$0")/lib.sh"
PY=/usr/bin/python3
S="$ROOT/../shared/data"
D="$E2E_TMP/demo"
run "$LANTERN" run "$ROOT/configs/demo.ini" --out "$D" --quiet
expect_status "the demo runs" 0
P="$S/pantheon2018"
run "$LANTERN" sample --data "$P/lcparam_DS17f.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb \
    --cov "$P/sys_DS17f.txt" --model lcdm-flat --out "$E2E_TMP/pan" --quiet
expect_status "Pantheon 2018 binned, flat LCDM, sampled" 0

# numpy's draws: a Gaussian in omega_m importance-weighted towards 0.36
# (weights N(0.36, 0.02) / N(0.30, 0.03)), with pandas' unnamed index column
$PY - "$E2E_TMP" <<'PY'
import sys
import numpy as np
from astropy.io import fits
d = sys.argv[1]
rng = np.random.default_rng(22)
x = rng.normal(0.30, 0.03, 20000)
w = np.exp(-0.5 * ((x - 0.36) / 0.02) ** 2 + 0.5 * ((x - 0.30) / 0.03) ** 2)
with open(d + "/draws.csv", "w") as f:
    f.write(",omega_m,weight\n")
    for i, (a, b) in enumerate(zip(x, w)):
        f.write("%d,%.10g,%.10g\n" % (i, a, b))
cols = [fits.Column(name="omega_m", format="D", array=x), fits.Column(name="weight", format="D", array=w),
        fits.Column(name="tag", format="8A", array=np.array(["a"] * len(x)))]
fits.BinTableHDU.from_columns(cols).writeto(d + "/draws.fits", overwrite=True)
PY

run "$LANTERN" plot "$D" --model lcdm-flat "$E2E_TMP/pan" "$E2E_TMP/draws.csv" \
    --label "Lamplighter" --label "Pantheon 2018" --label "numpy draws" --truth omega_m=0.3 \
    --out "$E2E_TMP/three.pdf"
expect_status "plot overlays a run's model, a sample folder and a CSV of weighted draws" 0
run "$LANTERN" plot "$D" --model lcdm-flat "$E2E_TMP/pan" "$E2E_TMP/draws.fits" \
    --out "$E2E_TMP/three.png" --size single
expect_status "the same with a FITS table, as a single-column PNG" 0
# the figure: a double-column PDF naming the three in its legend; the PNG
# holds each series' colour (plotkit.c's palette: blue, vermillion, green)
if msg=$($PY - "$E2E_TMP" "$ROOT/tests/e2e" 2>&1 <<'PY'
import re, subprocess, sys
d = sys.argv[1]
sys.path.insert(0, sys.argv[2])
import figures
info = subprocess.run(["pdfinfo", d + "/three.pdf"], capture_output=True, text=True).stdout
assert re.search(r"Page size:\s+504 x", info), info
text = subprocess.run(["pdftotext", d + "/three.pdf", "-"], capture_output=True, text=True).stdout
for want in ("Lamplighter", "Pantheon 2018", "numpy draws", "truth", "best fit"):
    assert want in text, (want, text)
counts = [figures.png_colour_count(d + "/three.png", c) for c in ((0, 114, 178), (213, 94, 0), (0, 158, 115))]
assert all(c > 50 for c in counts), counts
w, h, bpp, rows = figures.png_rows(d + "/three.png")
assert w == 1020, w
print("legend and colours of the three sets of draws", counts)
PY
); then pass "plot's figure: legend, colours, sizes ($msg)"; else fail "plot's figure: legend, colours, sizes ($msg)"; fi

# the weighted draws' marginal peaks at the weighted mean, 0.36 (a Gaussian
# times a Gaussian: N(0.3, 0.03^2) N(0.36, 0.02^2) / N(0.3, 0.03^2)); with
# the weights ignored it would peak at 0.30. A --pair figure of the CSV
# alone, its 95.45% region read from the PNG: the fill's x extent straddles
# 0.36, not 0.30. (Window 0.2-0.45 set with --range.)
printf 'omega_m,omega_de,weight\n' > "$E2E_TMP/pair.csv"
$PY - "$E2E_TMP" <<'PY'
import sys
import numpy as np
rng = np.random.default_rng(23)
x = rng.normal(0.30, 0.03, 20000)
y = rng.normal(0.70, 0.03, 20000)
w = np.exp(-0.5 * ((x - 0.36) / 0.02) ** 2 + 0.5 * ((x - 0.30) / 0.03) ** 2)
with open(sys.argv[1] + "/pair.csv", "a") as f:
    for a, b, c in zip(x, y, w):
        f.write("%.10g,%.10g,%.10g\n" % (a, b, c))
PY
run "$LANTERN" plot "$E2E_TMP/pair.csv" --params omega_m,omega_de --pair --range omega_m=0.2:0.45 \
    --range omega_de=0.55:0.85 --out "$E2E_TMP/pair.png"
if [ "$STATUS" -eq 0 ] && msg=$($PY - "$E2E_TMP/pair.png" "$ROOT/tests/e2e" 2>&1 <<'PY'
import sys
sys.path.insert(0, sys.argv[2])
import figures
w, h, bpp, rows = figures.png_rows(sys.argv[1])
# the 68.27% fill: blue at 55% against white (plotkit.c)
tint = tuple(round(255 - 0.55 * (255 - c)) for c in (0, 114, 178))
xs = [x for row in rows for x in range(w) if tuple(row[x * bpp:x * bpp + 3]) == tint]
assert xs, "no 68% fill"
# the frame: 0.7 in from the left, 0.15 in from the right, at 300 dpi
x0, x1 = 0.7 * 300, w - 0.15 * 300
mid = 0.2 + 0.25 * ((min(xs) + max(xs)) / 2 - x0) / (x1 - x0)
assert abs(mid - 0.36) < 0.01, mid
print("the 68%% region is centred at omega_m = %.3f (weighted 0.36, unweighted 0.30)" % mid)
PY
); then pass "plot honours a CSV's weight column ($msg)"; else fail "plot honours a CSV's weight column ($msg)"; fi

# a best fit on a prior edge is drawn whole: Pantheon with omega_m's prior
# cut at 0.35, where the best fit (0.30 unbounded) then sits; the window is
# widened so that the mark's glyph lies inside the frame (0.7 in = 50.4 pt
# from the page's left edge in a --pair figure), where clipping would cut
# it in half
run "$LANTERN" sample --data "$P/lcparam_DS17f.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb \
    --cov "$P/sys_DS17f.txt" --model lcdm --prior omega_m=uniform:0.35:1 --out "$E2E_TMP/edge" --quiet
run "$LANTERN" plot "$E2E_TMP/edge" --params omega_m,omega_de --pair --truth omega_de=1.5 \
    --out "$E2E_TMP/edge.pdf"
if [ "$STATUS" -eq 0 ] && msg=$($PY - "$E2E_TMP/edge.pdf" "$E2E_TMP/edge/summary.json" 2>&1 <<'PY'
import json, re, subprocess, sys
best = json.load(open(sys.argv[2]))["params"]["omega_m"]["best"]
assert abs(best - 0.35) < 0.01, best
text = subprocess.run(["pdftotext", "-bbox", sys.argv[1], "-"], capture_output=True, text=True).stdout
marks = [float(m.group(1)) for m in re.finditer(r'xMin="([0-9.]+)"[^>]*>\u00d7</word>', text)]
assert marks, "no best-fit mark"
assert min(marks) > 50.4, marks
# the truth omega_de = 1.5, far above the draws, is in view: a tick at 1.4 or beyond
ticks = [float(w.replace("\u2212", "-")) for w in re.findall(r'>([\u22120-9.]+)</word>', text)]
assert max(ticks) >= 1.4, ticks
print("best fit at omega_m = %.3f, its mark from %.1f pt (frame at 50.4); ticks to %.1f" % (best, min(marks), max(ticks)))
PY
); then pass "marks at a prior edge and far truths are drawn whole, in view ($msg)"
else fail "marks at a prior edge and far truths are drawn whole, in view ($msg)"; fi

# a tight posterior beside a broad one (widths 0.005 and 0.05): each
# member's density is formed on its own span, so the tight one's 68.27%
# region keeps its size; and the widest fill goes underneath, so the tight
# one's fill shows. Its 68.27% region of a 2-D normal reaches
# sqrt(2.30) sd from the mean in x (Delta chi2 = 2.30, chi-square table),
# times sqrt(1 + f^2) for the kernel, f = n^(-1/6).
$PY - "$E2E_TMP" <<'PY'
import sys
import numpy as np
rng = np.random.default_rng(24)
for name, sd in (("tight", 0.005), ("broad", 0.05)):
    x = rng.normal(0.30, sd, 20000)
    y = rng.normal(0.70, sd, 20000)
    np.savetxt(sys.argv[1] + "/" + name + ".csv", np.c_[x, y], delimiter=",",
               header="omega_m,omega_de", comments="")
PY
run "$LANTERN" plot "$E2E_TMP/tight.csv" "$E2E_TMP/broad.csv" --params omega_m,omega_de --pair \
    --range omega_m=0.15:0.45 --range omega_de=0.55:0.85 --out "$E2E_TMP/tb.png"
if [ "$STATUS" -eq 0 ] && msg=$($PY - "$E2E_TMP/tb.png" "$ROOT/tests/e2e" 2>&1 <<'PY'
import math, sys
sys.path.insert(0, sys.argv[2])
import figures
w, h, bpp, rows = figures.png_rows(sys.argv[1])
tint = tuple(round(255 - 0.55 * (255 - c)) for c in (0, 114, 178))  # the first: blue, 68%
# rows below the legend (above the frame, 1 in at most at this size), whose
# swatch has the same tint
count = [0] * w
for row in rows[300:]:
    for x in range(w):
        count[x] += tuple(row[x * bpp:x * bpp + 3]) == tint
# the fill's columns (anti-aliased edges of the other lines can take the
# same colour here and there; the fill has long runs)
xs = [x for x in range(w) if count[x] >= 10]
assert xs, "the tight member's 68% fill is hidden"
x0, x1 = 0.7 * 300, w - 0.15 * 300  # the frame, as plot draws a pair
per = 0.30 / (x1 - x0)  # omega_m per pixel
half = (max(xs) - min(xs) + 1) / 2 * per
want = math.sqrt(2.30) * 0.005 * math.sqrt(1 + 20000 ** (-1 / 3))
assert abs(half / want - 1) < 0.15, (half, want)
print("the tight 68%% region reaches %.4f from its centre (expected %.4f)" % (half, want))
PY
); then pass "a tight posterior beside a broad one keeps its size and shows ($msg)"
else fail "a tight posterior beside a broad one keeps its size and shows ($msg)"; fi

# ---- refusals ----
# refused NAME PATTERN ARGS...: "lantern plot ARGS --out x.pdf" exits 2 with
# a message matching PATTERN; table FILE LINE...: a table of draws
refused() {
    local name=$1 pattern=$2
    shift 2
    run "$LANTERN" plot "$@" --out "$E2E_TMP/x.pdf"
    expect_error "$name" 2 "$pattern"
}
table() {
    local f="$E2E_TMP/$1"
    shift
    printf '%s\n' "$@" >"$f"
}
refused "a parameter no source has is refused, listing what there is" \
    "w0: no set of draws has this parameter \(the first has omega_m" "$E2E_TMP/pan" --params omega_m,w0
run "$LANTERN" plot "$E2E_TMP/pan" --out "$E2E_TMP/x.svg"
expect_error "a figure name without .pdf or .png is refused" 2 "x.svg: the figure's name must end in .pdf or .png"
table short.csv omega_m,weight 0.3,1 0.31
refused "a row with too few fields names its file and line" \
    "short.csv:3: 1 fields where the header has 2" "$E2E_TMP/short.csv"
table negw.csv omega_m,weight 0.3,1 0.31,-2
refused "a negative weight names its file and line" \
    "negw.csv:3: weight -2 is not a finite number >= 0" "$E2E_TMP/negw.csv"
refused "a range with LO >= HI is refused" "omega_m: a range needs LO < HI" \
    "$E2E_TMP/pan" --range omega_m=0.4:0.2
refused "a range given twice is refused" "--range: omega_m is given twice" \
    "$E2E_TMP/pan" --range omega_m=0.1:0.5 --range omega_m=0.2:0.4
refused "--pair with three parameters is refused" "a pair figure draws two parameters \(3 given\)" \
    "$E2E_TMP/pan" --params omega_m,omega_de,q0 --pair
refused "more labels than sets of draws are refused" "--label: 2 labels for 1 sets of draws" \
    "$E2E_TMP/pan" --label a --label b
refused "a run without the model asked for is refused" "the run has no model wcdm" "$D" --model wcdm
refused "a missing source is refused" "nothere.csv: cannot open" "$E2E_TMP/nothere.csv"
refused "an unknown size is refused" "--size: 'tiny' is not single" "$E2E_TMP/pan" --size tiny
table const.csv omega_m,h0 0.3,70 0.31,70 0.32,70
refused "a column of one value is refused, not drawn blank" \
    "const: h0 cannot be drawn: one value in every draw" "$E2E_TMP/const.csv"
table zero.csv omega_m,weight 0.3,0 0.31,0 0.32,0
refused "weights all zero are refused" \
    "zero: omega_m cannot be drawn: fewer than two draws with weight" "$E2E_TMP/zero.csv"
table noheader.txt "0.3 0.7" "0.31 0.69" "0.29 0.71"
refused "a table without a line of names is refused at its first line" \
    "noheader.txt:1: the first line holds numbers, not column names" "$E2E_TMP/noheader.txt"
[ ! -e "$E2E_TMP/x.pdf" ] && pass "no refusal leaves a figure" || fail "no refusal leaves a figure"

#!/usr/bin/env bash
# The figures of a run as a journal takes them (issue 22): the demo's run,
# reported at a double column (the default) and at a single column. Checks,
# on the files a reader opens:
#  - the PDF page is 7 in (504 pt) or 3.4 in (244.8 pt) wide (pdfinfo), the
#    PNG 300 dpi: 2100 or 1020 pixels wide with a pHYs chunk of 11811 dots
#    a metre (the PNG specification, section 11.3.5.3);
#  - type of 8-10 pt: every word pdftotext -bbox finds is 7.5-10.5 pt tall
#    (a box's height over DejaVu Sans's ascent + descent, 1.164 em), but
#    for subscripts (5.5 pt or more, at most four characters; an upright word's type
#    is measured across it);
#  - real minus signs (U+2212) and no hyphen before a number; typeset names
#    (no "lcdm-flat", "chi2_min" or "w0wa-flat" in any figure's text);
#  - every figure, traces included, as PNG and PDF.
. "$(dirname "$0")/lib.sh"
PY=/usr/bin/python3
D="$E2E_TMP/demo"
run "$LANTERN" run "$ROOT/configs/demo.ini" --out "$D" --quiet
expect_status "the demo runs" 0
run "$LANTERN" report "$D" --out "$E2E_TMP/single" --figure-size single
expect_status "report --figure-size single" 0
run "$LANTERN" report "$D" --out "$E2E_TMP/bad" --figure-size quarter
expect_error "an unknown figure size is refused" 2 "--figure-size: 'quarter' is not single"

for size in double single; do
    dir=$D
    [ $size = single ] && dir=$E2E_TMP/single
    if msg=$($PY - "$dir" "$size" "$ROOT/tests/e2e" 2>&1 <<'PY'
import glob, os, re, struct, subprocess, sys
d, size = sys.argv[1], sys.argv[2]
sys.path.insert(0, sys.argv[3])
import figures
want_pt, want_px = (504.0, 2100) if size == "double" else (244.8, 1020)
pdfs = sorted(glob.glob(d + "/*.pdf"))
names = {os.path.basename(p)[:-4] for p in pdfs}
assert {"hubble", "posterior_lcdm-flat", "plane_w0wa-flat", "traces_w0wa-flat",
        "traces_lcdm-flat"} <= names, names
assert all(os.path.exists(d + "/" + n + ".png") for n in names)
sizes, minus = [], 0
for p in pdfs:
    info = subprocess.run(["pdfinfo", p], capture_output=True, text=True).stdout
    w = float(re.search(r"Page size:\s+([0-9.]+) x", info).group(1))
    assert abs(w - want_pt) < 0.5, (p, w)
    text = subprocess.run(["pdftotext", "-bbox", p, "-"], capture_output=True, text=True).stdout
    for m in re.finditer(r'xMin="([0-9.]+)" yMin="([0-9.]+)" xMax="([0-9.]+)" yMax="([0-9.]+)">([^<]*)</word>', text):
        x0, y0, x1, y1 = (float(m.group(k)) for k in range(1, 5))
        word = m.group(5)
        # a word set upright (a y axis's label) has its type across x
        across = x1 - x0 if y1 - y0 > 1.5 * (x1 - x0) and len(word) > 1 else y1 - y0
        pt = across / 1.164
        if any(g in word for g in "\u2022\u25cf\u00d7") or len(word) < 3:
            continue  # data points and marks drawn as glyphs; a short word (a glyph, a subscript, a slanted label cut in two) gives no type size
        assert pt <= 10.5, (p, word, pt)
        assert pt >= 7.5 or (len(word) <= 4 and pt >= 5.5), (p, word, pt)
        sizes.append(pt)
        assert not re.match(r"^-[0-9]", word), (p, "a hyphen for a minus", word)
        minus += word.startswith("\u2212")
        for code in ("lcdm-flat", "w0wa-flat", "chi2_min", "chi2"):
            assert code not in word, (p, word)
assert minus > 10, minus
for n in names:
    png = d + "/" + n + ".png"
    data = open(png, "rb").read()
    w = struct.unpack(">I", data[16:20])[0]  # IHDR's width (figures.py checks the rest)
    assert w == want_px, (png, w)
    i = data.index(b"pHYs")
    assert struct.unpack(">IIB", data[i + 4:i + 13]) == (11811, 11811, 1), png
print("%d PDFs, %d words of %.1f-%.1f pt, %d minus signs" % (len(pdfs), len(sizes), min(sizes), max(sizes), minus))
PY
    ); then pass "$size-column figures: sizes, type, minus signs, names ($msg)"
    else fail "$size-column figures: sizes, type, minus signs, names ($msg)"; fi
done
$PY "$ROOT/tests/e2e/figures.py" "$E2E_TMP"/single/*.png "$E2E_TMP"/single/*.pdf

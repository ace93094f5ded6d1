#!/usr/bin/env bash
# The report in a paper (issue 22): a two-column LaTeX document (columns of
# 3.4 in, a text of 7 in, as journals' two-column pages) holding the demo's
# constraints.tex (\input in a table*), its constraints_table.tex (the float
# lantern writes) and two single-column figures, one PDF at \columnwidth and
# one PNG at its own size (300 dpi: 3.4 in). pdflatex (Debian's texlive)
# must compile it without errors and without an overfull box. make test
# skips this where texlive is absent, with a message; .ci/run installs it.
. "$(dirname "$0")/lib.sh"
if ! command -v pdflatex >/dev/null 2>&1 || ! kpsewhich booktabs.sty >/dev/null 2>&1; then
    echo "# skip: pdflatex or booktabs.sty missing (apt-get install texlive-latex-base texlive-latex-recommended)"
    exit 0
fi
D="$E2E_TMP/demo"
run "$LANTERN" run "$ROOT/configs/demo.ini" --out "$D" --quiet --figure-size single
expect_status "the demo runs with single-column figures" 0
P="$E2E_TMP/paper"
mkdir -p "$P"
cp "$D/constraints.tex" "$D/constraints_table.tex" "$D/posterior_w0wa-flat.pdf" "$D/hubble.png" "$P/"
cat >"$P/paper.tex" <<'TEX'
\documentclass[10pt,twocolumn]{article}
\usepackage{booktabs}
\usepackage{graphicx}
\setlength{\textwidth}{7in}
\setlength{\columnsep}{0.2in}
\setlength{\oddsidemargin}{-0.25in}
\setlength{\evensidemargin}{-0.25in}
\setlength{\hfuzz}{0pt}
\begin{document}
\title{The Lamplighter Transient Survey: a test}
\author{lantern}
\maketitle
The constraints are in Table~\ref{tab:lantern-constraints}; the same table,
input bare, is Table~\ref{tab:bare}.

\input{constraints_table.tex}

\begin{table*}
\centering
\caption{The same, from constraints.tex.}
\label{tab:bare}
\input{constraints.tex}
\end{table*}

\begin{figure}
\includegraphics[width=\columnwidth]{posterior_w0wa-flat.pdf}
\caption{The posterior of flat $w_0w_a$.}
\end{figure}

\begin{figure}
\includegraphics{hubble.png}
\caption{The Hubble diagram, at its own size.}
\end{figure}
\end{document}
TEX
(cd "$P" && pdflatex -interaction=nonstopmode -halt-on-error paper.tex >pdflatex.out 2>&1 &&
    pdflatex -interaction=nonstopmode -halt-on-error paper.tex >pdflatex.out 2>&1)
STATUS=$?
cp "$P/paper.log" "$OUT" 2>/dev/null
if [ "$STATUS" -eq 0 ] && [ -s "$P/paper.pdf" ]; then
    pass "pdflatex compiles a two-column paper with lantern's tables and figures"
else
    fail "pdflatex compiles a two-column paper with lantern's tables and figures"
    grep -A3 "^!" "$P/paper.log" | head -10
fi
if [ -s "$P/paper.log" ] && ! grep -q "Overfull" "$P/paper.log"; then
    pass "no overfull box: the tables fit the page, the figures their column"
else
    fail "no overfull box: the tables fit the page, the figures their column"
    grep -A2 "Overfull" "$P/paper.log" | head -12
fi
# the PNG placed at its own size came out a column wide: its pHYs (300 dpi)
# was read (at 72 dpi it would be 14 in and overfull)
# pdfTeX logs each image with its size: <hubble.png, id=N, W pt x H pt>
w=$(grep -o "<hubble.png, id=[0-9]*, [0-9.]*pt" "$P/paper.log" | head -1 | sed 's/.*, //; s/pt//')
if [ -n "$w" ] && awk -v w="$w" 'BEGIN { exit !(w > 244 && w < 247) }' && ! grep -q "Undefined" "$P/paper.log"; then
    pass "the PNG's resolution places it at 3.4 in ($w pt); every reference resolved"
else
    fail "the PNG's resolution places it at 3.4 in (got '$w' pt); every reference resolved"
fi

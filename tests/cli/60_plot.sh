# 60_plot.sh - figures: 'series --figures' renders PNG, SVG and PDF that are
# valid, scripts re-run with gnuplot alone, hostile names stay inert, and a
# missing gnuplot is not an error.
P="$TMP/plot60"
rm -rf "$P" && mkdir -p "$P/in" && cp "$ROOT"/tests/data/series/*.csv "$P/in/"
# Hostile text from the user's own sheet: a run id with a system() call
# and a pipe, a solute name with quotes, backquotes and a macro. (The sheet
# reader already refuses control characters such as a newline in a run id;
# tests/test_plot.c feeds those to the plot stage directly.)
python3 - "$P/in/sheet.csv" "$P" <<'EOF'
import csv, sys
path, tmp = sys.argv[1], sys.argv[2]
lines = open(path, newline="").read().splitlines(True)
head = [l for l in lines if l.startswith("#")]
rows = list(csv.reader([l for l in lines if not l.startswith("#")]))
hdr = rows[0]
run, solute = hdr.index("run"), hdr.index("solute")
for r in rows[1:]:
    if r and r[run] == "N3":
        r[run] = "N3' system('touch %s/pwned1') |cat" % tmp
    if r and r[solute] == "NaCl":
        r[solute] = "Na'Cl `touch %s/pwned2` @m |cat" % tmp
with open(path, "w", newline="") as f:
    f.writelines(head)
    csv.writer(f, lineterminator="\n").writerows(rows)
EOF

if command -v gnuplot >/dev/null 2>&1; then
  CASE="series --figures --format all"
  run "$FF" series "$P/in/sheet.csv" --figures "$P/fig" --format png,svg,pdf
  expect_rc 0
  expect_err "figures in $P/fig"
  n_png=0
  for f in "$P"/fig/*.png; do
    [ -f "$f" ] || continue
    n_png=$((n_png + 1))
    if [ "$(head -c 4 "$f" | od -An -c | tr -d ' ')" = "211PNG" ] &&
       [ "$(wc -c < "$f")" -gt 5000 ]; then ok; else bad "$f is not a PNG"; fi
  done
  if [ "$n_png" -ge 8 ]; then ok; else bad "only $n_png PNG figures"; fi
  for f in "$P"/fig/*.svg; do
    if python3 -c 'import sys, xml.dom.minidom as m; m.parse(sys.argv[1])' \
         "$f" 2>/dev/null; then ok; else bad "$f does not parse as XML"; fi
  done
  for f in "$P"/fig/*.pdf; do
    if [ "$(head -c 5 "$f")" = "%PDF-" ]; then ok; else bad "$f is not a PDF"; fi
  done
  if ls "$P/fig" | grep -q '[^A-Za-z0-9._-]'; then
    bad "unsafe file name in $(ls "$P/fig" | tr '\n' ' ')"
  else ok; fi
  if [ -e "$P/pwned1" ] || [ -e "$P/pwned2" ]; then
    bad "a hostile name executed a command"; else ok; fi
  # ... and the hostile text did reach the scripts, escaped
  if grep -q "system(''touch" "$P"/fig/*.gp &&
     grep -q "Na''Cl \`touch" "$P"/fig/*.gp; then ok
  else bad "hostile names not found escaped in the scripts"; fi

  CASE="figure scripts re-run with gnuplot alone"
  run sh -c 'cd "$1" && gnuplot render.gp' sh "$P/fig"
  expect_rc 0
  if [ -s "$ERR" ]; then bad "gnuplot wrote on stderr"; else ok; fi
  for s in "$P"/fig/overview.gp "$P"/fig/solute_*.gp; do
    CASE="gnuplot $(basename "$s") alone"
    run sh -c 'cd "$1" && gnuplot -e "formats = '\''svg'\''" "$2"' sh \
      "$P/fig" "$(basename "$s")"
    expect_rc 0
    if [ -s "$ERR" ]; then bad "gnuplot wrote on stderr"; else ok; fi
  done
  if [ -e "$P/pwned1" ] || [ -e "$P/pwned2" ]; then
    bad "a hostile name executed a command on re-run"; else ok; fi
fi

CASE="series --figures without gnuplot on PATH"
run env PATH=/nonexistent "$FF" series "$P/in/sheet.csv" --figures "$P/nogp"
expect_rc 0
expect_err "gnuplot render.gp"
if [ -f "$P/nogp/render.gp" ] && [ -f "$P/nogp/overview.gp" ] &&
   [ ! -e "$P/nogp/overview.png" ]; then ok; else bad "scripts missing"; fi

CASE="series --format unknown"
run "$FF" series "$P/in/sheet.csv" --figures "$P/x" --format png,gif
expect_rc 1
expect_err "gif"

# 'point --figures' (runs once the point command has the option).
if "$FF" point --help 2>/dev/null | grep -q -- '--figures'; then
  CASE="point --figures --format svg,pdf"
  run "$FF" point "$ROOT/tests/data/series/water.csv" --figures "$P/pt" \
    --format svg,pdf
  expect_rc 0
  expect_err "figures in $P/pt"
  n=0
  for f in "$P"/pt/*.gp; do
    [ "$(basename "$f")" = render.gp ] && continue
    n=$((n + 1))
    s=${f%.gp}
    if [ -s "$s.svg" ] && [ "$(head -c 5 "$s.pdf")" = "%PDF-" ]; then ok
    else bad "$(basename "$f") not rendered"; fi
  done
  if [ "$n" -ge 1 ]; then ok; else bad "no event figure"; fi
  CASE="point figure scripts re-run alone"
  run sh -c 'cd "$1" && gnuplot render.gp' sh "$P/pt"
  expect_rc 0
  if [ -s "$ERR" ]; then bad "gnuplot wrote on stderr"; else ok; fi
  CASE="point --format unknown"
  run "$FF" point "$ROOT/tests/data/series/water.csv" --figures "$P/pt2" \
    --format tiff
  expect_rc 1; expect_err "tiff"
fi

# Rendering shows a bar on a terminal only, and --quiet silences it.
if command -v gnuplot >/dev/null 2>&1 && command -v script >/dev/null 2>&1; then
  CASE="series --figures: a rendering bar on a terminal"
  script -qc "'$FF' series '$P/in/sheet.csv' --figures '$P/bar' >/dev/null" /dev/null >"$P/tty" 2>&1
  if grep -q 'rendering figures .*\([0-9]*\) / \1' "$P/tty"; then ok; else bad "no finished rendering bar"; fi
  CASE="series --figures --quiet: no bar"
  script -qc "'$FF' series '$P/in/sheet.csv' --figures '$P/bar' --quiet >/dev/null" /dev/null >"$P/tty" 2>&1
  if grep -q 'rendering figures' "$P/tty"; then bad "--quiet still drew a bar"; else ok; fi
  CASE="series --figures: nothing extra on a redirected stderr"
  run "$FF" series "$P/in/sheet.csv" --figures "$P/bar"
  expect_rc 0
  if grep -q 'rendering' "$ERR"; then bad "bar on a non-terminal"; else ok; fi
fi

# style.gp - frostfit figure style. frostfit inlines this file into every
# figure script it writes (between the "style" marker lines), so edit it
# here to change all future figures, or edit the copy inside one script.
# Colours: Okabe & Ito (2008) "Color Universal Design", readable with the
# common colour-vision deficiencies; points also differ in shape.
set encoding utf8
set datafile missing 'NaN'
font_name = 'sans-serif'  # fontconfig and SVG viewers both know this family
font_pt   = 8            # text size at the figure's size in cm (points)
png_dpi   = 150          # PNG pixels per inch at that size
col_black  = '#000000'
col_orange = '#E69F00'
col_sky    = '#56B4E9'
col_green  = '#009E73'
col_yellow = '#F0E442'
col_blue   = '#0072B2'
col_red    = '#D55E00'
col_purple = '#CC79A7'
col_grey   = '#7F7F7F'
set linetype 1 lc rgb col_blue   lw 1.5 pt 7  ps 0.8 dt 1
set linetype 2 lc rgb col_red    lw 1.5 pt 5  ps 0.8 dt 1
set linetype 3 lc rgb col_green  lw 1.5 pt 9  ps 0.9 dt 1
set linetype 4 lc rgb col_purple lw 1.5 pt 13 ps 0.9 dt 1
set linetype 5 lc rgb col_orange lw 1.5 pt 11 ps 0.9 dt 1
set linetype 6 lc rgb col_sky    lw 1.5 pt 15 ps 0.8 dt 1
set linetype 7 lc rgb col_black  lw 1.5 pt 3  ps 0.8 dt 1
set linetype cycle 7
# Frame on the two data axes only, ticks outside, a faint grid to read off.
set border 3 lw 1
set tics nomirror out scale 0.6
set grid xtics ytics lw 0.5 lc rgb '#E5E5E5'
set key noopaque nobox samplen 2.5 spacing 1.1
set style fill transparent solid 0.22 noborder
set style data lines
set bars small
# The terminal command for one output format at a size in centimetres.
# (pdfcairo would halve the text without fontscale 1.)
term_for(fmt, w_cm, h_cm) = \
  fmt eq 'png' ? sprintf("set terminal pngcairo enhanced size %d,%d font '%s,%g' linewidth %g", \
                         int(w_cm / 2.54 * png_dpi), int(h_cm / 2.54 * png_dpi), \
                         font_name, font_pt * png_dpi / 72.0, png_dpi / 96.0) : \
  fmt eq 'svg' ? sprintf("set terminal svg enhanced size %d,%d font '%s,%g' linewidth 1 background '#FFFFFF'", \
                         int(w_cm / 2.54 * 72), int(h_cm / 2.54 * 72), font_name, font_pt) : \
  sprintf("set terminal pdfcairo enhanced size %gcm,%gcm font '%s,%g' fontscale 1 linewidth 1", \
          w_cm, h_cm, font_name, font_pt)

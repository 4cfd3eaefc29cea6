"""Stage 6, maps: the tidy tables behind every chart, and their drawings.

Contour lines and the limits map over two factors, slices through the best
settings, blend traces and ternary grids, the triangle's lines, per-run and
per-effect tables, what-if answers (tables.py), effects with their margins
(estimates.py), labels kept apart and crowded lines thinned (crowding.py), and
the Altair drawings of them (pictures.py, ternary_pictures.py,
effects_picture.py, trace_picture.py). The report and the workbench draw
the same tables, so a number on a chart means the same thing in both.

May import study/, derive/, model/, search/ and confirm/. Imported by report/, the top level
and ui/.
"""

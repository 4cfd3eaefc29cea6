"""Stage 2, derived responses: storage and panel tables reduced to one value per
run, and the whole load (study file, then derived responses).

May import study/. Imported by model/ and every later stage.
"""

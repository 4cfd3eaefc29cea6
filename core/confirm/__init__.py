"""Stage 5, confirmation: do the models predict what was made at chosen settings?

May import study/, derive/, model/ and search/. Imported by maps/, report/ and the top level.
"""

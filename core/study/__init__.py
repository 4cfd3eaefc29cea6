"""Stage 1, the study: the study file, reading lab tables, coded units, region
rules, confirmation tables and saving files.

Imports only the top-level errors and cautions modules; every other folder may import it.
"""

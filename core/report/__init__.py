"""Stage 6, presenting: the check summary, text tables, tidy tables behind maps,
the HTML page, the workbook, downloads and provenance.

May import every stage folder above. Imported only by the top level (cli.py) and ui/.
"""

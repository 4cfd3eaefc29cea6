"""Stage 7, documents: the check summary, text tables, the HTML page, the
workbook, downloads and provenance. The tables behind their charts live in maps/.

May import every stage folder above. Imported only by the top level (cli/) and ui/.
"""

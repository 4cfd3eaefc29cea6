"""Stage 4b, the search for the best balance: desirability, chances of meeting
limits, the search itself and its result.

May import study/, derive/ and model/. Imported by confirm/, maps/, report/ and the top level.
"""

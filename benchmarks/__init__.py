"""The benchmark behind ``clockplan bench``: the search timed against a brute-force enumerator.

It lives in the repository beside ``clockplan/`` and ships in no wheel: it needs the boards
in ``scenarios/bench/``, so it runs from a clone (``python -m clockplan bench``).
"""

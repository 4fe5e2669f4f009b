"""The workbench: the Streamlit front end where an analyst builds, checks and prints one case.

:mod:`.serve` starts the server on :mod:`.main`, whose pages are the scripts in :mod:`.steps`.
:mod:`.state` and :mod:`.entry` hold the rules without Streamlit (case state and autosave; what
is typed and shown); :mod:`.ui`, :mod:`.grids`, :mod:`.mapping` and :mod:`.review` are what the
pages share.
"""

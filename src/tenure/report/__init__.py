"""Writers: everything a plan or a comparison becomes on disk or on the terminal.

Writers read result objects only; they never solve anything.
"""

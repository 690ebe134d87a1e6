"""The course record (``record``): roster, labs, every run, adjustments and their history in SQLite.

May import every layer below, the run layer included.
"""

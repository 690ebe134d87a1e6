"""Reading student files and rosters: files, folders and zips (``ingest``), workbooks (``xlsx``), rows to a
submission in SI units (``submission``), and who a file belongs to (``identity``).

May import the base, methods and model layers; never grading, reporting or anything above.
Student data is untrusted here: every file's cost is bounded and nothing raises for a student's file.
"""

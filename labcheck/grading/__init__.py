"""The grading policy, as data: verdicts, error carried forward, diagnosis, accuracy and field quality
(``grade``), instructor adjustments (``adjust``), integrity leads (``integrity``), a file from another lab's
template (``labmatch``), tolerance sweeps (``tune``) and the comparison of two runs (``compare``).

May import the base, methods, model and reading layers; never reporting or anything above.
"""

"""The lab model: a lab spec read and validated (``spec``), a method's steps recomputed from given inputs
(``chain``) and the instruments' uncertainty propagated through them (``uncertainty``).

May import :mod:`labcheck.base`, :mod:`labcheck.reductions` and :mod:`labcheck.methods`; nothing above.
"""

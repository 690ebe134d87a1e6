"""The registry of methods a lab spec can name: labcheck's own, and those other installed packages add.

A package adds methods through the entry-point group ``labcheck.methods``: each entry point names a
:class:`~labcheck.methods.base.Method` (``leveling = my_dept_labs:LEVELING`` in its ``pyproject.toml``
under ``[project.entry-points."labcheck.methods"]``).  They are loaded once, the first time a spec is
read (:func:`load_plugins`); docs/plugins.md has a worked example.

Methods layer: may import only :mod:`labcheck.base` and :mod:`labcheck.reductions`.
"""

from __future__ import annotations

from labcheck.methods.base import Alternative, Constant, Method, Observation, Reference, Step, Variant
from labcheck.methods.baseline import BASELINE_RADIUS, ODOMETER, TAPED
from labcheck.methods.horizon import DIP, HIDDEN_HEIGHT
from labcheck.methods.zenith import FACE_PAIRS, GNOMON, HEIGHTING, MERIDIAN_ARC, RECIPROCAL, SEXTANT

METHODS: dict[str, Method] = {m.id: m for m in (DIP, HIDDEN_HEIGHT, TAPED, ODOMETER, BASELINE_RADIUS, GNOMON, SEXTANT, MERIDIAN_ARC, FACE_PAIRS, HEIGHTING, RECIPROCAL)}
BUILT_IN = frozenset(METHODS)
ENTRY_POINT_GROUP = "labcheck.methods"
PLUGIN_ERRORS: dict[str, str] = {}  # entry-point name -> why it could not be used (said when a spec names it)
_loaded = False


def load_plugins(reload: bool = False) -> dict[str, Method]:
    """Add the methods other installed packages register (entry-point group ``labcheck.methods``) to
    :data:`METHODS`, once; return the registry.  A plugin that fails to import, is not a Method, or would
    replace a built-in method is left out, with the reason in :data:`PLUGIN_ERRORS`."""
    global _loaded
    if _loaded and not reload:
        return METHODS
    from importlib.metadata import entry_points

    if reload:
        for key in [k for k in METHODS if k not in BUILT_IN]:
            del METHODS[key]
        PLUGIN_ERRORS.clear()
    for ep in sorted(entry_points(group=ENTRY_POINT_GROUP), key=lambda e: e.name):
        try:
            method = ep.load()
        except Exception as exc:  # a broken plugin must not stop labcheck: it is named when a spec asks for it
            PLUGIN_ERRORS[ep.name] = f"the package that provides it failed to load ({type(exc).__name__}: {exc})"
            continue
        if not isinstance(method, Method):
            PLUGIN_ERRORS[ep.name] = f"{ep.value} is not a labcheck Method"
        elif method.id in BUILT_IN:
            PLUGIN_ERRORS[ep.name] = f"{ep.value} would replace labcheck's own method {method.id!r}"
        elif method.id in METHODS and METHODS[method.id] is not method:
            PLUGIN_ERRORS[ep.name] = f"two installed packages provide a method {method.id!r}"
        else:
            METHODS[method.id] = method
    _loaded = True
    return METHODS


__all__ = ["METHODS", "BUILT_IN", "PLUGIN_ERRORS", "load_plugins", "Alternative", "Constant", "Method", "Observation",
           "Reference", "Step", "Variant"]

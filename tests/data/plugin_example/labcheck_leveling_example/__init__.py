"""An example labcheck plugin: a line of differential leveling between two benchmarks.

A department's own lab, added without editing labcheck: this package declares one method and registers
it under the entry-point group ``labcheck.methods`` (see docs/plugins.md).  Formulas: ΔH = ΣBS − ΣFS
(the rise from the start to the end is the sum of backsights less the sum of foresights), H_end =
H_start + ΔH (e.g. Ghilani & Wolf, *Elementary Surveying*, the chapter on differential leveling).
"""

import numpy as np

from labcheck.methods.base import Constant, Method, Observation, Reference, Step, formula_variant

LEVELING = Method(
    id="leveling_line",
    title="A leveling line between two benchmarks",
    summary="Backsights and foresights along the line give its height difference; with the start benchmark's "
            "elevation they give the end benchmark's, judged against its known elevation.",
    observations=(
        Observation("backsight", "backsights", "length", "m", "rod reading back to the last point, one row per setup",
                    repeated=True, spread=False, per="setup"),
        Observation("foresight", "foresights", "length", "m",
                    "rod reading forward to the next point, one row per setup, in the same order",
                    repeated=True, spread=False, per="setup"),
    ),
    constants=(
        Constant("start_elevation", "elevation of the start benchmark", "length", "the start benchmark's published elevation"),
        Constant("end_elevation_known", "known elevation of the end benchmark", "length",
                 "the end benchmark's published elevation (for the accuracy check)"),
    ),
    steps=(
        Step("sum_backsights", "sum of the backsights", "length", "m", "ΣBS", "definition", ("backsight",),
             lambda bs: float(np.sum(bs))),
        Step("sum_foresights", "sum of the foresights", "length", "m", "ΣFS", "definition", ("foresight",),
             lambda fs: float(np.sum(fs))),
        Step("height_difference", "height difference", "length", "m", "ΔH = ΣBS − ΣFS", "differential leveling",
             ("sum_backsights", "sum_foresights"), lambda b, f: b - f,
             (formula_variant("sights_swapped", "backsights and foresights swapped",
                              "The rise is the backsights less the foresights: ΔH = ΣBS − ΣFS.", lambda b, f: f - b),)),
        Step("end_elevation", "elevation of the end benchmark", "length", "m", "H_end = H_start + ΔH", "definition",
             ("start_elevation", "height_difference"), lambda h0, dh: h0 + dh),
    ),
    result_step="end_elevation",
    reference=Reference("known elevation of the end benchmark", ("end_elevation_known",), lambda h: {"value": h},
                        "The end benchmark's published elevation: your line's misclosure on it shows your field work."),
)

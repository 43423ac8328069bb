"""The package's one pint unit registry, shared by every module that reads units.

Scenario values (:mod:`fdtd.scenario.quantities`) and the column headers of
optical tables (:mod:`fdtd.media.tables`) are parsed by the same registry, so
that a unit means the same thing everywhere and pint's definitions are loaded
once.  Import this module only where units are read: pint itself costs about
0.2 s at start-up.
"""

from __future__ import annotations

import pint

try:
    # pint parses its definition file at every start (~0.4 s); its on-disk cache cuts that to
    # ~0.04 s from the second start on (light commands such as `gapwake threshold` notice)
    UREG = pint.UnitRegistry(cache_folder=":auto:")
except Exception:  # pragma: no cover - an unwritable cache folder: parse as usual
    UREG = pint.UnitRegistry()
# a count of periods (scenario durations such as "20 periods"; converted by the scenario layer)
UREG.define("periods = [] = period")

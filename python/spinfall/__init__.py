"""Spinfall from Python: exact polyhedron gravity of small-body shape models, surface maps and
particle flights in the body-fixed and inertial frames, as numpy arrays.

The classes are bindings over Spinfall's Rust library crates (no subprocess): the same inputs
give the same numbers as the ``spinfall`` command line on the same machine.

>>> import numpy as np, spinfall
>>> field = spinfall.Field(spinfall.Shape.builtin(), density_kg_m3=1900.0)
>>> out = field.evaluate(np.array([[4000.0, 0.0, 0.0]]))
>>> sorted(out)
['acceleration_m_s2', 'gradient_s2', 'inside', 'laplacian_s2', 'potential_m2_s2']

Spinfall is a research and planning tool, not flight-certified: anything that feeds an
operational decision must be checked against mission-approved models.
"""

from ._spinfall import (
    CAUTION,
    G_SI,
    Field,
    FlightResults,
    Scenario,
    Shape,
    SpinfallError,
    SpinfallOSError,
    SpinfallWarning,
    __version__,
)

__all__ = [
    "CAUTION",
    "G_SI",
    "Field",
    "FlightResults",
    "Scenario",
    "Shape",
    "SpinfallError",
    "SpinfallOSError",
    "SpinfallWarning",
    "__version__",
]

"""Type stubs of the compiled module ``spinfall._spinfall`` (re-exported by ``spinfall``)."""

import os
import pathlib
from collections.abc import Callable, Iterator
from typing import Any, Literal, Optional, Union

import numpy as np
import numpy.typing as npt

F64Array = npt.NDArray[np.float64]
I64Array = npt.NDArray[np.int64]
BoolArray = npt.NDArray[np.bool_]
PathLike = Union[str, os.PathLike[str]]
Progress = Callable[[str, int, int], Any]
"""``progress(stage, done, total)``: called on the calling thread when the figures change."""

CAUTION: str
"""The caution that goes with every result: research and planning, not flight-certified."""
G_SI: float
"""The gravitational constant Spinfall uses, m^3 kg^-1 s^-2."""
__version__: str

class SpinfallError(ValueError):
    """Bad input refused by Spinfall (shape model, scenario, value or array)."""

class SpinfallOSError(OSError):
    """A file Spinfall could not read or write; ``path`` names it, ``errno`` is the system's."""

    path: pathlib.Path

class SpinfallWarning(UserWarning):
    """A warning that does not stop the work (a repair, a setting without effect)."""

class Shape:
    """A closed, outward-oriented shape model in metres, with its mass properties."""

    @staticmethod
    def load(
        path: PathLike, unit: Literal["km", "m"] = "km", recenter: bool = False
    ) -> Shape:
        """Opens an OBJ, PLY or STL file whose coordinates are in ``unit``."""
    @staticmethod
    def from_bytes(
        data: bytes, name: str, unit: Literal["km", "m"] = "km", recenter: bool = False
    ) -> Shape:
        """Opens a shape model from a file's bytes; ``name``'s extension picks the format."""
    @staticmethod
    def builtin(recenter: bool = False) -> Shape:
        """The built-in demo body (``builtin:quillon``)."""
    @property
    def name(self) -> str:
        """The body's default name (file stem or demo name)."""
    @property
    def source(self) -> str:
        """Where the model came from."""
    @property
    def unit(self) -> str:
        """The unit the coordinates were read in ("km" or "m")."""
    @property
    def recentered(self) -> bool:
        """Whether the model was recentred on its centre of mass."""
    @property
    def recentred_by_m(self) -> F64Array:
        """How far the model was moved, m, shape (3,)."""
    @property
    def warnings(self) -> list[str]:
        """What validation repaired."""
    @property
    def face_count(self) -> int:
        """Number of faces."""
    @property
    def vertex_count(self) -> int:
        """Number of vertices."""
    @property
    def volume_m3(self) -> float:
        """Enclosed volume, m^3."""
    @property
    def area_m2(self) -> float:
        """Surface area, m^2."""
    @property
    def centroid_m(self) -> F64Array:
        """Centre of mass at constant density, m, shape (3,)."""
    @property
    def inertia_per_density_m5(self) -> F64Array:
        """Inertia tensor about the centre of mass per unit density, m^5, shape (3, 3)."""
    @property
    def principal_moments_per_density_m5(self) -> F64Array:
        """Principal moments per unit density, m^5, ascending, shape (3,)."""
    @property
    def principal_axes(self) -> F64Array:
        """Principal axes, one per row, shape (3, 3)."""
    @property
    def equivalent_radius_m(self) -> float:
        """Radius of the sphere of equal volume, m."""
    @property
    def brillouin_radius_m(self) -> float:
        """Radius of the smallest sphere about the centre of mass enclosing the body, m."""
    @property
    def bounds_m(self) -> F64Array:
        """Minimum and maximum corners of the vertices, m, shape (2, 3)."""
    @property
    def vertices_m(self) -> F64Array:
        """Vertex positions, m, shape (vertex_count, 3)."""
    @property
    def faces(self) -> I64Array:
        """Vertex indices of each face, shape (face_count, 3)."""
    def mass_kg(self, density_kg_m3: float) -> float:
        """Mass at ``density_kg_m3``, kg."""
    def inertia_kg_m2(self, density_kg_m3: float) -> F64Array:
        """Inertia tensor at ``density_kg_m3``, kg m^2, shape (3, 3)."""
    def info(self, density_kg_m3: Optional[float] = None) -> dict[str, Any]:
        """What ``spinfall info`` reports, with the same keys."""

class Field:
    """The gravity field of a constant-density polyhedron (Werner & Scheeres 1997)."""

    def __init__(
        self,
        shape: Shape,
        density_kg_m3: Optional[float] = None,
        *,
        mass_kg: Optional[float] = None,
        gm_m3_s2: Optional[float] = None,
        method: Literal["direct", "interpolated"] = "direct",
        max_rel_error: float = 1e-9,
        max_memory_mb: Optional[int] = None,
        cache_dir: Optional[PathLike] = None,
        progress: Optional[Progress] = None,
    ) -> None:
        """Builds the field; give exactly one of density, mass or GM."""
    def evaluate(self, points: F64Array) -> dict[str, npt.NDArray[Any]]:
        """Potential, acceleration, gradient tensor, Laplacian and inside flag at (n, 3) points."""
    @property
    def gm_m3_s2(self) -> float:
        """Gravitational parameter of the body, m^3/s^2."""
    @property
    def method(self) -> str:
        """"direct" or "interpolated"."""
    @property
    def max_rel_error(self) -> Optional[float]:
        """The interpolated field's error bound (None for direct)."""
    @property
    def info(self) -> dict[str, Any]:
        """How the field was computed: the ``field`` record of results.json, plus ``store`` and
        ``build_s`` (this process's cache outcome and build time) for an interpolated field."""
    def describe(self) -> str:
        """One line saying how the field is computed."""

class Scenario:
    """A scenario document: body, launches and how to fly them."""

    @staticmethod
    def from_json(
        source: Union[str, bytes, os.PathLike[str]], base_dir: Optional[PathLike] = None
    ) -> Scenario:
        """Reads JSON text, bytes or a file ("builtin:example" for the example)."""
    @staticmethod
    def builtin() -> Scenario:
        """The built-in example (``builtin:example``)."""
    def to_json(self) -> str:
        """The document as pretty JSON."""
    @property
    def name(self) -> Optional[str]:
        """The scenario's name."""
    @property
    def body_name(self) -> str:
        """The body's name."""
    @property
    def source(self) -> str:
        """Where the scenario came from."""
    @property
    def base_dir(self) -> pathlib.Path:
        """The folder relative shape paths are resolved against."""
    @property
    def launch_count(self) -> int:
        """Launches once fans and dispersion sets are expanded."""
    @property
    def warnings(self) -> list[str]:
        """Settings without effect."""
    def shape(self) -> Shape:
        """The scenario's shape model."""
    def fly(
        self,
        progress: Optional[Progress] = None,
        *,
        method: Optional[Literal["direct", "interpolated"]] = None,
        max_rel_error: Optional[float] = None,
        max_memory_mb: Optional[int] = None,
        cache_dir: Optional[PathLike] = None,
        max_launches: Optional[int] = None,
    ) -> FlightResults:
        """Flies every launch as ``spinfall fly`` does (Ctrl+C cancels)."""
    def surface_map(
        self,
        progress: Optional[Progress] = None,
        *,
        method: Optional[Literal["direct", "interpolated"]] = None,
        max_rel_error: Optional[float] = None,
        max_memory_mb: Optional[int] = None,
        cache_dir: Optional[PathLike] = None,
    ) -> dict[str, npt.NDArray[Any]]:
        """The per-face surface map as ``spinfall map`` computes it."""

class FlightResults:
    """The reports of a run, one per launch, in launch order."""

    @property
    def ids(self) -> list[str]:
        """Launch ids in launch order."""
    @property
    def launches(self) -> dict[str, dict[str, Any]]:
        """Every launch as a dict, keyed by id."""
    def launch(self, key: Union[str, int]) -> dict[str, Any]:
        """One launch as a dict, by id or index."""
    def __getitem__(self, key: Union[str, int]) -> dict[str, Any]: ...
    def __len__(self) -> int: ...
    def __contains__(self, id: str) -> bool: ...
    def __iter__(self) -> Iterator[str]: ...
    def table(self) -> dict[str, Any]:
        """One column per results.csv column over all launches."""
    def failures(self) -> list[tuple[str, str]]:
        """The launches that failed, as (id, reason) pairs."""
    @property
    def field(self) -> dict[str, Any]:
        """How gravity was computed."""
    @property
    def elapsed_s(self) -> float:
        """Wall-clock time of the flights, s."""

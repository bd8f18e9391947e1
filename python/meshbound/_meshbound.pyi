# Type stubs of the compiled half of meshbound (python/src/lib.rs). The public API is
# meshbound/__init__.py, typed inline; these calls are its building blocks.
from typing import List, Optional, Sequence, Tuple

import numpy as np
import numpy.typing as npt

VERSION: str
POINT_CODES: List[str]
RULES: List[Tuple[str, str]]
DEFAULT_RULE: str

def three_mesh(
    h: Sequence[float], phi: Sequence[float], formal_order: float, rule: str, order_max: float
) -> str: ...
def two_mesh_gci(h: Sequence[float], phi: Sequence[float], formal_order: float) -> str: ...
def two_mesh_gci_points(
    h: Sequence[float], phi: npt.NDArray[np.float64], formal_order: float
) -> Tuple[npt.NDArray[np.float64], npt.NDArray[np.float64]]: ...
def least_squares_estimate(
    h: Sequence[float],
    phi: Sequence[float],
    names: Optional[Sequence[str]],
    formal_order: float,
    guard: bool,
    order_min: float,
    order_max: float,
) -> str: ...

class PointSetup:
    def __init__(
        self,
        h: Sequence[float],
        formal_order: float,
        rule: str,
        order_max: float,
        noise_floor: float,
        guard: bool,
        ls_order_min: float,
        ls_order_max: float,
    ) -> None: ...
    @property
    def h(self) -> List[float]: ...

def estimate_points(
    setup: PointSetup, phi: npt.NDArray[np.float64]
) -> Tuple[
    npt.NDArray[np.uint8],
    npt.NDArray[np.float64],
    npt.NDArray[np.float64],
    npt.NDArray[np.float64],
    npt.NDArray[np.uint8],
    npt.NDArray[np.uint16],
]: ...
def estimate_point(
    setup: PointSetup, phi: Sequence[float]
) -> Tuple[int, Optional[float], Optional[float], Optional[float], int, int]: ...

class ColumnSummaryPart:
    @property
    def points(self) -> int: ...
    def merged(self, other: ColumnSummaryPart) -> ColumnSummaryPart: ...
    def to_json(self) -> str: ...
    def state(self) -> str: ...
    @staticmethod
    def from_state(state: str) -> ColumnSummaryPart: ...

def summarise_points(
    setup: PointSetup,
    phi: npt.NDArray[np.float64],
    name: str,
    offset: int,
    ids: Optional[Sequence[str]],
    weights: Optional[npt.NDArray[np.float64]],
) -> ColumnSummaryPart: ...
def reduce_history(
    values: npt.NDArray[np.float64],
    x: Optional[npt.NDArray[np.float64]],
    reduction: str,
    batches: int,
    min_samples: int,
    final_share: float,
    final_min: int,
) -> str: ...
def assess(path: str, reach: Sequence[str]) -> str: ...

"""meshbound: numerical-uncertainty statements from mesh-refinement studies, from Python.

The estimators of the meshbound library, compiled from Rust, with names and shapes for
scripts and notebooks:

* :func:`three_mesh` -- the three-mesh procedure of Celik, Ghia, Roache, Freitas, Coleman &
  Raad (2008), "Procedure for Estimation and Reporting of Uncertainty Due to Discretization in
  CFD Applications", J. Fluids Eng. 130(7) 078001: observed order, Richardson extrapolation,
  the Grid Convergence Index, with the convergence classes of Stern, Wilson, Coleman &
  Paterson (2001), J. Fluids Eng. 123, 793-802, and every published three-mesh rule beside it
  (Roache 1998 Fs = 3 off the formal order; Xing & Stern 2010 factor of safety; Stern et al.
  2001 correction factor);
* :func:`two_mesh_gci` -- Roache (1998), "Verification and Validation in Computational Science
  and Engineering": two meshes, the formal order assumed, Fs = 3;
* :func:`least_squares` -- Eca & Hoekstra (2014), "A procedure for the estimation of the
  numerical uncertainty of CFD calculations based on grid refinement studies", J. Comput.
  Phys. 262, 104-130, over four meshes or more;
* :func:`estimate_points` -- the same estimates at a million points of a field in one call
  (numpy arrays in and out, the GIL released, every core used), :func:`estimate_point` for one
  point, and :func:`summarise_points` -- a field column's summary that merges exactly across
  partitions (:class:`Summary`), for Dask and other distributed dataframes;
* :func:`reduce_history` -- a monitor history reduced to its steady part (MSER-5: White 1997,
  Simulation 69), mean and statistical uncertainty (batch means, Student t);
* :func:`assess` -- a whole study file, as objects and pandas DataFrames.

Numerical uncertainty is not model-test acceptance: a small uncertainty says that the meshes
agree with each other, not that the model is right or that a machine meets its guarantees.
Cavitation erosion and vibration destroy runners; defer to the applicable test codes, local
regulations and licensed engineering judgment.
"""

from __future__ import annotations

import json
import math
from dataclasses import asdict, dataclass, field
from typing import Any, Dict, Iterable, List, Optional, Sequence, Tuple

import numpy as np

from . import _meshbound as _mb
from ._errors import (
    EstimateInputError,
    HistoryError,
    MergeError,
    MeshboundError,
    OutputError,
    StudyError,
)

__all__ = [
    "CAUTION",
    "CLASS_LABELS",
    "BASIS_LABELS",
    "POINT_CODES",
    "RULES",
    "DEFAULT_RULE",
    "Notice",
    "RuleResult",
    "ThreeMeshEstimate",
    "LeastSquaresEstimate",
    "PointEstimate",
    "PointEstimates",
    "Summary",
    "HistoryReduction",
    "Assessment",
    "three_mesh",
    "two_mesh_gci",
    "two_mesh_gci_points",
    "TwoMeshPoints",
    "least_squares",
    "estimate_point",
    "estimate_points",
    "summarise_points",
    "reduce_history",
    "assess",
    "MeshboundError",
    "EstimateInputError",
    "StudyError",
    "HistoryError",
    "MergeError",
    "OutputError",
]

__version__: str = _mb.VERSION

#: The caution every result carries.
CAUTION: str = (
    "Numerical uncertainty is not model-test acceptance: it says how far the meshes agree, not "
    "that the model is right or that a machine meets its guarantees. Do not set a setting "
    "level, a submergence or a guarantee on it without the model tests the applicable test "
    "codes require; defer to those codes, local regulations and licensed engineering judgment."
)

#: Per-point class codes (index = code): as in the per-point files of the command line.
CLASS_LABELS: Tuple[str, ...] = ("none", "monotonic", "oscillatory", "divergent", "no_change")
#: What stated U at a point (index = code).
BASIS_LABELS: Tuple[str, ...] = (
    "none",
    "gci",
    "oscillation_range",
    "formal_order",
    "no_change",
    "least_squares",
    "noise_floor",
)
#: Per-point warning codes: bit ``k`` of a point's warning bits stands for ``POINT_CODES[k]``.
POINT_CODES: Tuple[str, ...] = tuple(_mb.POINT_CODES)
#: The published rules: label -> title with its source.
RULES: Dict[str, str] = dict(_mb.RULES)
#: The rule that states U unless another is chosen (see docs/method.md of the repository).
DEFAULT_RULE: str = _mb.DEFAULT_RULE


def _pandas():
    try:
        import pandas
    except ImportError as e:  # pragma: no cover - depends on the environment
        raise ImportError(
            "tables need pandas: pip install pandas (or meshbound[pandas])"
        ) from e
    return pandas


@dataclass(frozen=True)
class Notice:
    """A warning with a stable code (the codes are the library's, e.g. ``oscillatory``)."""

    code: str
    message: str


def _notices(pairs: Iterable[Sequence[str]]) -> Tuple[Notice, ...]:
    return tuple(Notice(code, message) for code, message in pairs)


class _Result:
    """Shared ``to_dict``: a plain dict of the fields (tuples as lists), ready for JSON."""

    def to_dict(self) -> Dict[str, Any]:
        return _plain(asdict(self))  # type: ignore[call-overload]


def _plain(v: Any) -> Any:
    if isinstance(v, dict):
        return {k: _plain(x) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [_plain(x) for x in v]
    return v


@dataclass(frozen=True)
class RuleResult(_Result):
    """One published rule's uncertainty on the finest mesh.

    ``uncertainty`` is absolute (None when the rule gives none); ``relative`` is U/|phi1|;
    ``branch`` says which case of the rule applied.
    """

    rule: str
    title: str
    uncertainty: Optional[float]
    relative: Optional[float]
    safety_factor: Optional[float]
    order: Optional[float]
    branch: str
    warnings: Tuple[Notice, ...] = ()


def _rule(d: Dict[str, Any], warnings: Iterable[Sequence[str]]) -> RuleResult:
    return RuleResult(
        rule=d["rule"],
        title=RULES.get(d["rule"], d["rule"]),
        uncertainty=d["uncertainty"],
        relative=d["relative"],
        safety_factor=d["safety_factor"],
        order=d["order"],
        branch=d["branch"],
        warnings=_notices(warnings),
    )


@dataclass(frozen=True)
class ThreeMeshEstimate(_Result):
    """The three-mesh estimate (Celik et al. 2008) with every published rule beside it.

    Relative measures are fractions. ``gci_fine`` is the Celik et al. (2008) fine-mesh GCI
    (Fs = 1.25) and ``gci_uncertainty`` the absolute uncertainty that procedure states (the
    larger of the GCI and half the oscillation's range for oscillatory convergence, the
    formal order with Fs = 3 without an observed order); ``uncertainty`` is the one stated by
    ``rule`` (default: the correction factor of Stern et al. 2001), the figure the per-point
    estimate reports too. ``uncertainty`` is None where the data support none (divergence).
    """

    h: Tuple[float, float, float]
    phi: Tuple[float, float, float]
    convergence: str
    convergence_ratio: Optional[float]
    observed_order: Optional[float]
    extrapolated: Optional[float]
    approx_rel_error: Optional[float]
    extrap_rel_error: Optional[float]
    gci_fine: Optional[float]
    gci_coarse: Optional[float]
    gci_uncertainty: Optional[float]
    safety_factor: float
    ratios: Tuple[float, float]
    oscillation_half_range: float
    governing: Optional[str]
    order_at_bound: bool
    rule: str
    uncertainty: Optional[float]
    rules: Tuple[RuleResult, ...]
    warnings: Tuple[Notice, ...]
    caution: str = CAUTION

    def rules_table(self):
        """Every published rule as a pandas DataFrame (one row per rule)."""
        pd = _pandas()
        rows = [
            {k: v for k, v in r.to_dict().items() if k != "warnings"} for r in self.rules
        ]
        return pd.DataFrame(rows).set_index("rule")


def three_mesh(
    h: Sequence[float],
    phi: Sequence[float],
    *,
    formal_order: float = 2.0,
    rule: str = DEFAULT_RULE,
    order_max: float = 20.0,
) -> ThreeMeshEstimate:
    """The three-mesh estimate of Celik et al. (2008), J. Fluids Eng. 130(7) 078001.

    Args:
        h: representative cell sizes, finest first (h1 < h2 < h3); only their ratios matter.
        phi: the value each mesh gave, finest first.
        formal_order: the formal order of the discretisation.
        rule: the published rule that states ``uncertainty``: one of ``celik_gci``,
            ``roache_fs3``, ``xing_stern``, ``stern_correction`` (see :data:`RULES`).
        order_max: the upper end of the observed-order search (0, order_max].

    The observed order is solved as a bracketed root instead of the published fixed-point
    iteration. Raises :class:`EstimateInputError` for sizes that are not finite and
    increasing, values that are not finite, or an unknown rule.
    """
    d = json.loads(
        _mb.three_mesh(
            [float(x) for x in h], [float(x) for x in phi], formal_order, rule, order_max
        )
    )
    e = d["estimate"]
    return ThreeMeshEstimate(
        h=tuple(float(x) for x in h),  # type: ignore[arg-type]
        phi=tuple(float(x) for x in phi),  # type: ignore[arg-type]
        convergence=e["convergence"],
        convergence_ratio=e["convergence_ratio"],
        observed_order=e["observed_order"],
        extrapolated=e["extrapolated"],
        approx_rel_error=e["approx_rel_error"],
        extrap_rel_error=e["extrap_rel_error"],
        gci_fine=e["gci_fine"],
        gci_coarse=e["gci_coarse"],
        gci_uncertainty=e["uncertainty"],
        safety_factor=e["safety_factor"],
        ratios=tuple(e["ratios"]),  # type: ignore[arg-type]
        oscillation_half_range=e["oscillation_half_range"],
        governing=e["governing"],
        order_at_bound=d["order_at_bound"],
        rule=d["rule"],
        uncertainty=d["uncertainty"],
        rules=tuple(_rule(r, w) for r, w in d["rules"]),
        warnings=_notices(d["warnings"]),
    )


def two_mesh_gci(
    h: Sequence[float], phi: Sequence[float], *, formal_order: float = 2.0
) -> RuleResult:
    """Roache's (1998) two-mesh GCI: U = 3 |phi2 - phi1| / (r21^p_f - 1) with the formal
    order p_f. Two meshes show no order and no convergence class; a third mesh would show
    whether they are in the asymptotic range (the result carries the warning
    ``order_assumed``)."""
    d = json.loads(
        _mb.two_mesh_gci([float(x) for x in h], [float(x) for x in phi], formal_order)
    )
    return _rule(d["estimate"], d["warnings"])


@dataclass(frozen=True, eq=False)
class TwoMeshPoints:
    """Roache's (1998) two-mesh GCI at many points, as numpy arrays of one entry per point
    (NaN where a value is missing or the GCI does not apply): ``uncertainty`` (absolute, of the
    finest value) and ``relative`` (U/|phi1|). Every point carries the warning in
    ``warnings`` (``order_assumed``): two meshes show no order and no convergence class."""

    uncertainty: np.ndarray
    relative: np.ndarray
    formal_order: float
    safety_factor: float
    warnings: Tuple[Notice, ...]
    caution: str = CAUTION

    def __len__(self) -> int:
        return len(self.uncertainty)

    def to_dict(self) -> Dict[str, np.ndarray]:
        """The arrays by name."""
        return {"uncertainty": self.uncertainty, "relative": self.relative}

    def to_frame(self, index=None):
        """A pandas DataFrame with one row per point (``index``: e.g. the input's index)."""
        return _pandas().DataFrame(self.to_dict(), index=index)


def two_mesh_gci_points(
    h: Sequence[float], phi: Any, *, formal_order: float = 2.0
) -> TwoMeshPoints:
    """:func:`two_mesh_gci` at every row of ``phi`` (n points x 2 meshes, finest first): one
    call for a million points, the GIL released, every core used; each row's figures are
    exactly what :func:`two_mesh_gci` states for it (NaN for its None; a row with a missing
    value, which the scalar call refuses, gives NaN). Roache (1998): U = 3 |phi2 - phi1| /
    (r21^p_f - 1) with the formal order p_f."""
    hh = [float(x) for x in h]
    if len(hh) != 2:
        raise EstimateInputError(f"two sizes are needed (got {len(hh)})")
    arr = np.ascontiguousarray(np.asarray(phi, dtype=np.float64))
    if arr.ndim != 2:
        raise EstimateInputError(
            f"phi must be a 2-D array (points x 2 meshes), not {arr.ndim}-D"
        )
    u, rel = _mb.two_mesh_gci_points(hh, arr, formal_order)
    first = two_mesh_gci(hh, [1.0, 1.0], formal_order=formal_order)
    return TwoMeshPoints(
        uncertainty=u,
        relative=rel,
        formal_order=float(formal_order),
        safety_factor=float(first.safety_factor),
        warnings=tuple(w for w in first.warnings if w.code == "order_assumed"),
    )


@dataclass(frozen=True)
class LeastSquaresEstimate(_Result):
    """The least-squares estimate of Eca & Hoekstra (2014), J. Comput. Phys. 262, 104-130.

    ``uncertainty`` is U of the finest mesh (absolute); ``per_mesh`` holds each mesh's fit
    value and U; ``fits`` the eight fits (free order, first, second, first-and-second, each
    unweighted and weighted) as dicts; ``selected`` the one that governs; ``guard`` the
    order-2 floor when it applied (a project rule; ``floor=False`` gives the published rules
    alone).
    """

    order: Optional[float]
    convergence: str
    convergence_basis: str
    uncertainty: float
    error_estimate: float
    safety_factor: float
    data_range: float
    order_at_bound: bool
    per_mesh: Tuple[Dict[str, Any], ...]
    fits: Tuple[Dict[str, Any], ...]
    selected: Dict[str, Any]
    guard: Optional[Dict[str, Any]]
    warnings: Tuple[Notice, ...]
    caution: str = CAUTION

    def fits_table(self):
        """The eight fits as a pandas DataFrame."""
        return _pandas().DataFrame(list(self.fits))


def least_squares(
    h: Sequence[float],
    phi: Sequence[float],
    *,
    formal_order: float = 2.0,
    floor: bool = True,
    order_range: Tuple[float, float] = (-4.0, 8.0),
    names: Optional[Sequence[str]] = None,
) -> LeastSquaresEstimate:
    """The least-squares estimate of Eca & Hoekstra (2014) over four meshes or more.

    Args:
        h: sizes, finest first, strictly increasing; phi: values, finest first.
        formal_order: the formal order (below 2 the floor assumes it instead of 2).
        floor: apply the order-2 floor to free orders p >= 2 (a project rule, see the
            repository's docs/method.md); False gives the published rules alone.
        order_range: the searched free order.
        names: mesh names for ``per_mesh`` (default m1, m2, ...).
    """
    d = json.loads(
        _mb.least_squares_estimate(
            [float(x) for x in h],
            [float(x) for x in phi],
            None if names is None else list(names),
            formal_order,
            floor,
            float(order_range[0]),
            float(order_range[1]),
        )
    )
    e = d["estimate"]
    return LeastSquaresEstimate(
        order=e["order"],
        convergence=e["convergence"],
        convergence_basis=e["convergence_basis"],
        uncertainty=e["per_mesh"][0]["uncertainty"],
        error_estimate=e["error_estimate"],
        safety_factor=e["safety_factor"],
        data_range=e["data_range"],
        order_at_bound=e["order_at_bound"],
        per_mesh=tuple(e["per_mesh"]),
        fits=tuple(e["fits"]),
        selected=e["selected"],
        guard=e["guard"],
        warnings=_notices(d["warnings"]),
    )


def _setup(
    h: Sequence[float],
    formal_order: float,
    rule: str,
    order_max: float,
    noise_floor: float,
    floor: bool,
    order_range: Tuple[float, float],
):
    return _mb.PointSetup(
        [float(x) for x in h],
        float(formal_order),
        rule,
        float(order_max),
        float(noise_floor),
        bool(floor),
        float(order_range[0]),
        float(order_range[1]),
    )


def _codes(bits: int) -> Tuple[str, ...]:
    return tuple(c for k, c in enumerate(POINT_CODES) if bits >> k & 1)


@dataclass(frozen=True)
class PointEstimate(_Result):
    """The estimate at one point of a field (see :func:`estimate_point`)."""

    convergence: str
    order: Optional[float]
    extrapolated: Optional[float]
    uncertainty: Optional[float]
    basis: str
    warning_bits: int
    warnings: Tuple[str, ...]


def estimate_point(
    h: Sequence[float],
    phi: Sequence[float],
    *,
    formal_order: float = 2.0,
    rule: str = DEFAULT_RULE,
    order_max: float = 20.0,
    noise_floor: float = 0.0,
    floor: bool = True,
    order_range: Tuple[float, float] = (-4.0, 8.0),
) -> PointEstimate:
    """The per-point estimate of a field at one point: three meshes -> the three-mesh estimate
    (Celik et al. 2008, U by ``rule``); four or more -> least squares (Eca & Hoekstra 2014).
    A value that is not finite (missing) gives class ``none``. Exactly the figures
    :func:`estimate_points` gives for the same row. ``noise_floor`` > 0: differences no larger
    count as round-off (a project rule, docs/method.md of the repository)."""
    s = _setup(h, formal_order, rule, order_max, noise_floor, floor, order_range)
    c, o, x, u, b, bits = _mb.estimate_point(s, [float(v) for v in phi])
    return PointEstimate(
        convergence=CLASS_LABELS[c],
        order=o,
        extrapolated=x,
        uncertainty=u,
        basis=BASIS_LABELS[b],
        warning_bits=bits,
        warnings=_codes(bits),
    )


@dataclass(frozen=True, eq=False)
class PointEstimates:
    """The estimates at many points, as numpy arrays of one entry per point (NaN where a
    figure does not exist): ``class_code`` (see :data:`CLASS_LABELS`), ``order``,
    ``extrapolated``, ``uncertainty`` (absolute, of the finest value), ``basis_code`` (see
    :data:`BASIS_LABELS`), ``warning_bits`` (bit k = :data:`POINT_CODES` [k])."""

    class_code: np.ndarray
    order: np.ndarray
    extrapolated: np.ndarray
    uncertainty: np.ndarray
    basis_code: np.ndarray
    warning_bits: np.ndarray

    def __len__(self) -> int:
        return len(self.class_code)

    @property
    def convergence(self) -> np.ndarray:
        """The class of each point as text."""
        return np.asarray(CLASS_LABELS, dtype=object)[self.class_code]

    def warnings_at(self, i: int) -> Tuple[str, ...]:
        """The warning codes of point ``i``."""
        return _codes(int(self.warning_bits[i]))

    def count(self, code: str) -> int:
        """How many points carry warning ``code``."""
        k = POINT_CODES.index(code)
        return int(np.count_nonzero(self.warning_bits >> k & 1))

    def point(self, i: int) -> PointEstimate:
        """Point ``i`` as a :class:`PointEstimate`."""
        f = lambda a: None if math.isnan(a[i]) else float(a[i])  # noqa: E731
        return PointEstimate(
            convergence=CLASS_LABELS[int(self.class_code[i])],
            order=f(self.order),
            extrapolated=f(self.extrapolated),
            uncertainty=f(self.uncertainty),
            basis=BASIS_LABELS[int(self.basis_code[i])],
            warning_bits=int(self.warning_bits[i]),
            warnings=self.warnings_at(i),
        )

    def to_dict(self) -> Dict[str, np.ndarray]:
        """The arrays by name."""
        return {
            "class_code": self.class_code,
            "order": self.order,
            "extrapolated": self.extrapolated,
            "uncertainty": self.uncertainty,
            "basis_code": self.basis_code,
            "warning_bits": self.warning_bits,
        }

    def to_frame(self, index=None):
        """A pandas DataFrame with one row per point (``index``: e.g. the input's index)."""
        return _pandas().DataFrame(self.to_dict(), index=index)


def estimate_points(
    h: Sequence[float],
    phi: Any,
    *,
    formal_order: float = 2.0,
    rule: str = DEFAULT_RULE,
    order_max: float = 20.0,
    noise_floor: float = 0.0,
    floor: bool = True,
    order_range: Tuple[float, float] = (-4.0, 8.0),
) -> PointEstimates:
    """The per-point estimate at every row of ``phi`` (n points x meshes, finest mesh first):
    one call for a million points, the GIL released, every core used. Each row gives exactly
    what :func:`estimate_point` gives for it (see there for the settings)."""
    s = _setup(h, formal_order, rule, order_max, noise_floor, floor, order_range)
    arr = np.ascontiguousarray(np.asarray(phi, dtype=np.float64))
    if arr.ndim != 2:
        raise EstimateInputError(
            f"phi must be a 2-D array (points x meshes), not {arr.ndim}-D"
        )
    return PointEstimates(*_mb.estimate_points(s, arr))


class Summary:
    """The summary of one field column over some of its points, mergeable with the summaries
    of the other points: :meth:`merge` gives exactly what one pass over all the points gives
    (counts, classes and their shares, mean and median order, mean and largest relative
    uncertainty, the first points of each warning in the order of the whole field), whatever
    the split and the order of the merges. Picklable (for Dask and multiprocessing)."""

    __slots__ = ("_part",)

    def __init__(self, part) -> None:
        self._part = part

    def merge(self, other: "Summary") -> "Summary":
        """The summary of both sets of points (neither is changed). Raises
        :class:`MergeError` when they were made for different columns, sizes or settings."""
        return Summary(self._part.merged(other._part))

    @classmethod
    def merge_all(cls, parts: Iterable["Summary"]) -> "Summary":
        """All partial summaries merged (at least one)."""
        it = iter(parts)
        try:
            out = next(it)
        except StopIteration:
            raise MergeError("no partial summary to merge") from None
        for p in it:
            out = out.merge(p)
        return out

    @property
    def points(self) -> int:
        """Points summarised."""
        return self._part.points

    def to_dict(self) -> Dict[str, Any]:
        """The summary (the field column summary of the library's JSON result, plus the
        points, the ids of points with a missing value, and the counts of formal-order and
        oscillation-range points)."""
        return json.loads(self._part.to_json())

    def warnings_table(self):
        """The point warnings as a pandas DataFrame (code, points, first ids, more)."""
        return _pandas().DataFrame(self.to_dict()["point_warnings"])

    def __eq__(self, other: object) -> bool:
        return isinstance(other, Summary) and self._part == other._part

    __hash__ = None  # type: ignore[assignment]

    def __reduce__(self):
        return (_summary_from_state, (self._part.state(),))

    def __repr__(self) -> str:
        d = self.to_dict()
        return f"Summary(name={d['name']!r}, points={d['points']}, classes={d['classes']})"


def _summary_from_state(state: str) -> Summary:
    return Summary(_mb.ColumnSummaryPart.from_state(state))


def summarise_points(
    h: Sequence[float],
    phi: Any,
    *,
    name: str = "value",
    offset: int = 0,
    ids: Optional[Sequence[Any]] = None,
    weights: Any = None,
    formal_order: float = 2.0,
    rule: str = DEFAULT_RULE,
    order_max: float = 20.0,
    noise_floor: float = 0.0,
    floor: bool = True,
    order_range: Tuple[float, float] = (-4.0, 8.0),
) -> Summary:
    """Estimates every row of ``phi`` (as :func:`estimate_points`) and summarises the column.

    Args:
        name: the column's name (summaries merge only with the same name and settings).
        offset: the global position of the first row in the whole field (0-based): the first
            points of each warning are those with the smallest positions. For a partition of
            a larger table pass its first row number.
        ids: the points' ids as listed in the warnings (default: the global position).
        weights: each point's area or volume for the class shares (default: equal).
    """
    s = _setup(h, formal_order, rule, order_max, noise_floor, floor, order_range)
    arr = np.ascontiguousarray(np.asarray(phi, dtype=np.float64))
    if arr.ndim != 2:
        raise EstimateInputError(
            f"phi must be a 2-D array (points x meshes), not {arr.ndim}-D"
        )
    if offset < 0:
        raise EstimateInputError(f"offset must be >= 0 (got {offset})")
    w = None if weights is None else np.ascontiguousarray(weights, dtype=np.float64)
    id_list = None if ids is None else [str(i) for i in ids]
    return Summary(_mb.summarise_points(s, arr, name, int(offset), id_list, w))


@dataclass(frozen=True)
class HistoryReduction(_Result):
    """A monitor history reduced to one value with its uncertainty.

    ``value`` is the figure the reduction asks for (the mean of the steady part by default);
    ``steady_start`` the first sample of the steady part (MSER-5, White 1997);
    ``statistical`` the standard and expanded (95 %, Student t) uncertainty of the mean from
    batch means, with the autocorrelation-time estimate as a cross-check (None when the
    steady part is too short or not found); ``iterative`` the final window's half range and
    drift. ``result`` holds the library's whole result as a dict.
    """

    value: float
    mean: float
    status: str
    samples: int
    steady_start: int
    statistical: Optional[Dict[str, Any]]
    iterative: Optional[Dict[str, Any]]
    warnings: Tuple[Notice, ...]
    result: Dict[str, Any] = field(repr=False)


def reduce_history(
    values: Any,
    x: Any = None,
    *,
    reduction: str = "mean",
    batches: int = 20,
    min_samples: int = 100,
    final_share: float = 0.1,
    final_min: int = 10,
) -> HistoryReduction:
    """Reduces the samples of a monitor history (a 1-D array; ``x`` the iteration or time of
    each, optional): the steady part by the marginal standard error rule on batches of five
    (MSER-5; White 1997, Simulation 69), its mean, the statistical uncertainty of the mean by
    non-overlapping batch means with Student's t (cross-checked with the integrated
    autocorrelation time), and the iterative uncertainty from the final window. Raises
    :class:`HistoryError` for no samples, samples that are not finite or settings out of
    range."""
    v = np.ascontiguousarray(values, dtype=np.float64)
    if v.ndim != 1:
        raise HistoryError(f"values must be 1-D, not {v.ndim}-D")
    xa = None if x is None else np.ascontiguousarray(x, dtype=np.float64)
    r = json.loads(
        _mb.reduce_history(v, xa, reduction, batches, min_samples, final_share, final_min)
    )["result"]
    return HistoryReduction(
        value=r["value"],
        mean=r["mean"],
        status=r["status"],
        samples=r["samples"],
        steady_start=r["steady"]["start_index"],
        statistical=r["statistical"],
        iterative=r["iterative"],
        warnings=tuple(Notice(w["code"], w["message"]) for w in r["warnings"]),
        result=r,
    )


class Assessment:
    """A study assessed: the library's JSON result (its documented contract) as a dict in
    :meth:`to_dict`, and its tables as pandas DataFrames (pandas is imported when a table is
    first asked for)."""

    def __init__(self, result: Dict[str, Any]) -> None:
        self._r = result

    def to_dict(self) -> Dict[str, Any]:
        """The whole result, as the command line's JSON output gives it."""
        return self._r

    @property
    def title(self) -> str:
        return self._r["title"]

    @property
    def caution(self) -> str:
        """The caution every report carries."""
        return self._r["caution"]

    @property
    def files_read(self) -> List[str]:
        return list(self._r["files_read"])

    @property
    def meshes(self):
        """One row per mesh, finest first: name, cells, size, ratio."""
        return _pandas().DataFrame(self._r["meshes"]).set_index("name")

    @property
    def quantities(self):
        """One row per scalar quantity: the governing statement and its figures."""
        rows = []
        for q in self._r["quantities"]:
            u = q.get("uncertainty") or {}
            g = q.get("governing") or {}
            tg = q.get("three_grid") or {}
            rows.append(
                {
                    "name": q["name"],
                    "unit": q.get("unit"),
                    "value": u.get("value", q["values"][0] if q.get("values") else None),
                    "uncertainty": u.get("absolute"),
                    "relative": u.get("relative"),
                    "lower": u.get("lower"),
                    "upper": u.get("upper"),
                    "method": u.get("method"),
                    "rule": g.get("three_mesh_rule"),
                    "convergence": q.get("convergence"),
                    "observed_order": tg.get("observed_order"),
                    "extrapolated": g.get("extrapolated"),
                    "demonstrated": g.get("demonstrated"),
                }
            )
        return _pandas().DataFrame(rows).set_index("name")

    @property
    def rules(self):
        """Every published rule per quantity: one row per (quantity, rule)."""
        rows = [
            dict(quantity=q["name"], **r)
            for q in self._r["quantities"]
            for r in (q.get("rules") or [])
        ]
        return _pandas().DataFrame(rows)

    @property
    def warnings(self):
        """Every warning: code, message, subject."""
        return _pandas().DataFrame(
            [
                {"code": w["code"], "message": w["message"], "subject": w.get("subject")}
                for w in self._r["warnings"]
            ]
        )

    @property
    def fields(self):
        """One row per field column: classes, orders and relative uncertainties."""
        rows = []
        for f in self._r["fields"]:
            for c in f["columns"]:
                row = {"field": f["name"], "column": c["name"], "points": f["points"]}
                row.update(c["classes"])
                for k in ("mean_order", "median_order", "order_points", "mean_relative", "max_relative"):
                    row[k] = c.get(k)
                rows.append(row)
        return _pandas().DataFrame(rows)

    def __repr__(self) -> str:
        return f"Assessment(title={self.title!r}, quantities={len(self._r['quantities'])}, fields={len(self._r['fields'])})"


def assess(path: Any, *, reach: Sequence[Any] = ()) -> Assessment:
    """Reads and assesses a study file (YAML), as the command line's ``assess`` does; no file
    is written (per-point files a study asks for are skipped). ``reach``: folders besides the
    study's own that it may read from. Raises :class:`StudyError` with ``file``,
    ``key_path``, ``line`` and ``column`` for bad input."""
    import os

    text = _mb.assess(os.fspath(path), [os.fspath(r) for r in reach])
    return Assessment(json.loads(text))

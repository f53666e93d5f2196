"""Design matrices: one estimation sample and one model form -> arrays to fit."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from .data import Selection
from .equations import ModelForm, Regressor
from .errors import EstimationError
from .estimators import cluster_count

CONSTANT = "const"


def cell_name(equation: str, sample: str) -> str:
    """How messages name one equation on one sample."""
    return f"equation '{equation}' on sample '{sample}'"


@dataclass(frozen=True)
class Design:
    """Dependent variable and both regressor sets for one equation on one sample.

    Columns of ``x_unrestricted`` and ``x_restricted`` start with the constant.
    ``restriction`` is the row R of ``R b = 0`` over all unrestricted
    coefficients (constant included, with weight 0).
    """

    equation: str
    sample: str
    form: ModelForm
    economies: Sequence[str]  # a pandas Index from the selection
    y: np.ndarray
    x_unrestricted: np.ndarray
    x_restricted: np.ndarray
    clusters: np.ndarray | None
    symbols: Mapping[str, str] = field(default_factory=dict)  # the spec's variable labels

    @property
    def names_unrestricted(self) -> tuple[str, ...]:
        return (CONSTANT, *(r.name for r in self.form.unrestricted))

    @property
    def names_restricted(self) -> tuple[str, ...]:
        return (CONSTANT, *(r.name for r in self.form.restricted))

    @property
    def labels_unrestricted(self) -> tuple[str, ...]:
        return ("constant", *(r.text(self.symbols) for r in self.form.unrestricted))

    @property
    def labels_restricted(self) -> tuple[str, ...]:
        return ("constant", *(r.text(self.symbols) for r in self.form.restricted))

    @property
    def restriction(self) -> np.ndarray:
        return np.array([[0.0, *self.form.restriction]])

    @property
    def restriction_text(self) -> str:
        return self.form.restriction_text(self.symbols)

    @property
    def nobs(self) -> int:
        return len(self.y)

    @property
    def where(self) -> str:
        return cell_name(self.equation, self.sample)


def regressor_matrix(frame_values: Mapping[str, np.ndarray], regs: tuple[Regressor, ...],
                     n: int) -> np.ndarray:
    """The constant and each regressor (a combination of canonical columns) as columns."""
    out = np.empty((n, len(regs) + 1), order="F")  # filled and read column by column
    out[:, 0] = 1.0
    for j, reg in enumerate(regs, 1):
        col: np.ndarray | None = None
        for c, w in reg.weights.items():
            term = frame_values[c] if w == 1.0 else w * frame_values[c]
            col = term if col is None else col + term
        out[:, j] = 0.0 if col is None else col
    return out


def selected_columns(selection: Selection) -> dict[str, np.ndarray]:
    """The canonical columns a selection's form needs, over the economies used."""
    return {c: selection.column(c).astype(float, copy=False) for c in selection.columns}


def design_arrays(selection: Selection, form: ModelForm, equation: str,
                  symbols: Mapping[str, str] | None = None,
                  values: Mapping[str, np.ndarray] | None = None) -> Design:
    """The arrays of ``form`` on ``selection`` (from ``values``, its columns, when at hand),
    unchecked (see :func:`build_design`)."""
    values = selected_columns(selection) if values is None else values
    n = selection.nobs
    clusters = selection.column(selection.cluster) if selection.cluster is not None else None
    return Design(equation, selection.sample, form, selection.economies,
                  values[form.dependent], regressor_matrix(values, form.unrestricted, n),
                  regressor_matrix(values, form.restricted, n), clusters, dict(symbols or {}))


def build_design(selection: Selection, form: ModelForm, equation: str,
                 symbols: Mapping[str, str] | None = None) -> Design:
    """Arrays for ``form`` on ``selection``; refuse too few economies and collinear regressors."""
    n = selection.nobs
    where = cell_name(equation, selection.sample)
    k = 1 + len(form.unrestricted)
    if n < k + 2:
        raise EstimationError(
            f"{n} economies are left ({selection.n_in_sample} in the sample, "
            f"{len(selection.dropped)} dropped), but the unrestricted equation has {k} "
            f"coefficients and needs at least {k + 2} economies", where)
    design = design_arrays(selection, form, equation, symbols)
    for x, regs in ((design.x_unrestricted, form.unrestricted),
                    (design.x_restricted, form.restricted)):
        _check_rank(x, ("constant", *(r.text(design.symbols) for r in regs)), where)
    if design.clusters is not None:
        _check_clusters(design.clusters, form, where)
    return design


def _check_clusters(clusters: np.ndarray, form: ModelForm, where: str) -> None:
    """Refuse cluster-robust inference with fewer clusters than the parameters estimated."""
    count = cluster_count(clusters) or 0
    params = form.parameters.names
    need = max(2, len(params))
    if count < need:
        what = (f"the {len(params)} parameters it estimates ({', '.join(params)})"
                if len(params) >= 2 else "cluster-robust covariance")
        raise EstimationError(
            f"{where} has {count} cluster{'s' if count != 1 else ''}, fewer than {need} needed "
            f"for {what}; cluster by a column with more groups, or choose covariance = "
            "\"HC1\"", "inference.cluster")


# A column-scaled design whose cross-product has eigenvalues further apart than this has
# full rank beyond doubt (its condition number is below 1e4); closer calls go to the
# singular values of the design itself.
_CLEARLY_FULL_RANK = 1e-8


def _check_rank(x: np.ndarray, labels: tuple[str, ...], where: str) -> None:
    largest = np.abs(x).max(axis=0)
    scale = np.where(largest > 0, largest, 1.0)
    xs = x / scale
    eig = np.linalg.eigvalsh(xs.T @ xs)
    if eig[0] > _CLEARLY_FULL_RANK * eig[-1]:
        return
    if np.linalg.matrix_rank(xs) == x.shape[1]:
        return
    for j in range(1, x.shape[1] + 1):
        if np.linalg.matrix_rank(xs[:, :j]) < j:
            others = ", ".join(labels[: j - 1])
            raise EstimationError(
                f"regressor {labels[j - 1]} is perfectly collinear with {others} in this sample "
                "(for example, it does not vary); drop it or widen the sample", where)

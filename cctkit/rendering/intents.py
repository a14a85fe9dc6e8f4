"""ANSI/IES TM-30-20 Annex E design intents: fidelity, preference and vividness priority levels.

TM-30-20 Annex E recommends specifying a light source by a design intent and a priority
level (1 strictest, 3 loosest), each a set of criteria on Rf, Rg, Rf,h1 and Rcs,h1
(hue bin 1, the reds).  :data:`CRITERIA` holds them, one row per level, with the source
of every threshold beside it.  The thresholds were written down from memory of the
published Annex E table and have not been checked against a copy of it; each is marked
so.  A second, independent recollection agrees with the preference rows (Rf >= 78/75/70,
Rg >= 95/92/89, Rcs,h1 in 7..19 / 3..23 / -1..27 %) and the vividness rows' Rg floors
(117/110/100); it is least sure of the fidelity rows' Rg bands and Rf,h1 floors, and of the
vividness rows' Rf and Rcs,h1 floors.  Check them against the standard before relying on a
class; the tests put constructed spectra either side of thresholds of each intent.  A spectrum meets a level when it meets every criterion of that level; its level
for an intent is the strictest one it meets (1, 2 or 3), or 0 when it meets none.

Everything is vectorised over spectra: pass arrays of shape (N,).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["INTENTS", "CRITERIA", "Criterion", "levels", "level_names", "meets"]

#: The three design intents, in the order Annex E lists them, with their level prefix.
INTENTS = {"fidelity": "F", "preference": "P", "vividness": "V"}


@dataclass(frozen=True)
class Criterion:
    """One row of Annex E: a design intent's priority level and its limits (None: no limit).

    ``Rcs_h1`` limits are in percent, as TM-30 prints the local chroma shift.
    """

    intent: str
    level: int
    Rf_min: float | None = None
    Rg_min: float | None = None
    Rg_max: float | None = None
    Rf_h1_min: float | None = None
    Rcs_h1_min: float | None = None
    Rcs_h1_max: float | None = None

    @property
    def name(self) -> str:
        return f"{INTENTS[self.intent]}{self.level}"

    def text(self) -> str:
        """The criteria as one line, e.g. ``Rf >= 78, Rg >= 95, 7 <= Rcs,h1 <= 19 %``."""
        parts = []
        if self.Rf_min is not None:
            parts.append(f"Rf >= {self.Rf_min:g}")
        if self.Rg_min is not None and self.Rg_max is not None:
            parts.append(f"{self.Rg_min:g} <= Rg <= {self.Rg_max:g}")
        elif self.Rg_min is not None:
            parts.append(f"Rg >= {self.Rg_min:g}")
        if self.Rf_h1_min is not None:
            parts.append(f"Rf,h1 >= {self.Rf_h1_min:g}")
        if self.Rcs_h1_min is not None and self.Rcs_h1_max is not None:
            parts.append(f"{self.Rcs_h1_min:g} <= Rcs,h1 <= {self.Rcs_h1_max:g} %")
        elif self.Rcs_h1_min is not None:
            parts.append(f"Rcs,h1 >= {self.Rcs_h1_min:g} %")
        return ", ".join(parts)


#: Annex E criteria, strictest level first within each intent.
CRITERIA: tuple[Criterion, ...] = (
    # Fidelity priority: high Rf with a gamut near the reference and a faithful red bin.
    Criterion("fidelity", 1, Rf_min=95, Rg_min=95, Rg_max=105, Rf_h1_min=90),  # from memory (TM-30-20 Annex E)
    Criterion("fidelity", 2, Rf_min=90, Rg_min=94, Rg_max=106, Rf_h1_min=85),  # from memory (TM-30-20 Annex E)
    Criterion("fidelity", 3, Rf_min=85, Rg_min=92, Rg_max=108, Rf_h1_min=80),  # from memory (TM-30-20 Annex E)
    # Preference priority: moderately saturated reds with fidelity kept.
    Criterion("preference", 1, Rf_min=78, Rg_min=95, Rcs_h1_min=7, Rcs_h1_max=19),  # from memory (TM-30-20 Annex E)
    Criterion("preference", 2, Rf_min=75, Rg_min=92, Rcs_h1_min=3, Rcs_h1_max=23),  # from memory (TM-30-20 Annex E)
    Criterion("preference", 3, Rf_min=70, Rg_min=89, Rcs_h1_min=-1, Rcs_h1_max=27),  # from memory (TM-30-20 Annex E)
    # Vividness priority: strongly increased gamut and red chroma, fidelity relaxed.
    Criterion("vividness", 1, Rf_min=64, Rg_min=117, Rcs_h1_min=15),  # from memory (TM-30-20 Annex E)
    Criterion("vividness", 2, Rf_min=64, Rg_min=110, Rcs_h1_min=8),  # from memory (TM-30-20 Annex E)
    Criterion("vividness", 3, Rf_min=60, Rg_min=100, Rcs_h1_min=0),  # from memory (TM-30-20 Annex E)
)


def _ge(v: np.ndarray, lim: float | None) -> np.ndarray:
    return np.ones(v.shape, dtype=bool) if lim is None else (v >= lim)


def _le(v: np.ndarray, lim: float | None) -> np.ndarray:
    return np.ones(v.shape, dtype=bool) if lim is None else (v <= lim)


def meets(criterion: Criterion, Rf, Rg, Rf_h1, Rcs_h1_percent) -> np.ndarray:
    """True where a spectrum meets every limit of ``criterion`` (NaN meets nothing), shape (N,)."""
    Rf, Rg, Rf_h1, Rcs = (np.asarray(a, dtype=np.float64) for a in (Rf, Rg, Rf_h1, Rcs_h1_percent))
    with np.errstate(invalid="ignore"):
        ok = (
            _ge(Rf, criterion.Rf_min)
            & _ge(Rg, criterion.Rg_min)
            & _le(Rg, criterion.Rg_max)
            & _ge(Rf_h1, criterion.Rf_h1_min)
            & _ge(Rcs, criterion.Rcs_h1_min)
            & _le(Rcs, criterion.Rcs_h1_max)
        )
    finite = np.isfinite(Rf) & np.isfinite(Rg) & np.isfinite(Rf_h1) & np.isfinite(Rcs)
    return ok & finite


def levels(Rf, Rg, Rf_h1, Rcs_h1_percent) -> dict[str, np.ndarray]:
    """The strictest Annex E level each spectrum meets, per intent: ``{"fidelity": (N,) int, ...}``.

    1, 2 or 3; 0 where no level of that intent is met (or a value is NaN).
    """
    out: dict[str, np.ndarray] = {}
    for intent in INTENTS:
        shape = np.broadcast(np.asarray(Rf), np.asarray(Rg), np.asarray(Rf_h1), np.asarray(Rcs_h1_percent)).shape
        got = np.zeros(shape, dtype=int)
        for c in sorted((c for c in CRITERIA if c.intent == intent), key=lambda c: -c.level):
            got = np.where(meets(c, Rf, Rg, Rf_h1, Rcs_h1_percent), c.level, got)
        out[intent] = got
    return out


def level_names(lv: dict[str, np.ndarray], i: int) -> list[str]:
    """The levels spectrum ``i`` meets as names (``["F2", "P1"]``); empty when none."""
    return [
        f"{INTENTS[k]}{int(np.asarray(v).reshape(-1)[i])}"
        for k, v in lv.items()
        if int(np.asarray(v).reshape(-1)[i]) > 0
    ]

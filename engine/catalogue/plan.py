"""The catalogue plan: which columns mean what, the row statuses and the appended columns.

A catalogue is any table with a column the temperature comes from (kelvin,
Johnson B-V, or Gaia BP-RP) and, optionally, a magnitude column (V, or Gaia G
converted to V). Every input column and row is kept, in order, and five
columns are appended (:data:`OUTPUT_NAMES`):

========== ===============================================================
r, g, b    display-encoded colour, 0-1 floats (``Rendered.rgb_encoded``)
intensity  0-1 from the magnitude tone curve (1 without magnitudes)
status     ``ok`` or a short reason (:data:`STATUSES`); rows that are not
           coloured keep empty r, g, b and intensity; no row is dropped
========== ===============================================================

With ``linear_columns`` (working-space names, e.g. ``("acescg",)``), three more columns per
working space follow ``status``: ``r_<space>, g_<space>, b_<space>`` (``-`` in the name
becomes ``_``: ``r_aces2065_1``), the same stars' scene-linear RGB in that working space
(the same look, the working space as the target, its gamut method ``none`` unless the
settings ask for one), float32, empty where the row is not coloured.

:class:`CataloguePlan` is the validated, picklable description of one run
that every engine (this machine, :mod:`starkiln.engine.catalogue.dask_engine`)
hands to the per-chunk function (:mod:`starkiln.engine.catalogue.colouring`).

Temperature sources: kelvin (500-100 000 K, the render path's range); B-V and BP-RP through
:func:`starkiln.engine.stars.temperature.temperature_from_index` with the plan's
``index_model``: ``synthetic`` (default; the blackbody of the same synthetic colour,
[BessellMurphy2012], [Riello2021]) or ``relation`` ([Ballesteros2012] for B-V;
[Mucciarelli2021] for BP-RP, dwarfs, [Fe/H] = 0 assumed).
Gaia G becomes V through :func:`starkiln.engine.stars.gaia.v_from_g` ([Riello2021]
Table C.2).

Dust per star: ``dust_column`` names a column of E(B-V) (``dust_quantity="ebv"``) or of A_V
(``"av"``, E(B-V) = A_V / R_V with the settings' R_V, [Cardelli1989] eq. 1); each row's value
goes to the render path as ``dust_ebv`` (the settings' law and R_V; the settings may hold no
fixed E(B-V) then). Without magnitudes the colours come from a colour grid with an E(B-V)
axis (:mod:`starkiln.engine.catalogue.colour_grid`); with magnitudes each chunk goes through
the render path with the arriving light's sums from its lattice over temperature and E(B-V)
(``render(..., path_sums="table")``, :mod:`starkiln.engine.pipeline.path_table`), and with
``exact`` every row is rendered exactly.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from starkiln.engine.errors import StarkilnError
from starkiln.engine.eye.vision import MAGNITUDE_RANGE
from starkiln.engine.pipeline.settings import Settings

#: Row statuses, in the order of their codes (uint8 in memory, text in files).
STATUSES = (
    "ok",                      # coloured
    "extrapolated",            # coloured, BP-RP outside the calibrated range (on request)
    "bluer-than-blackbody",    # coloured at 100 000 K: bluer than that blackbody (synthetic)
    "missing-temperature",     # the temperature source cell is empty / null
    "missing-magnitude",       # the magnitude (or the BP-RP that G-to-V needs) is empty
    "not-a-number",            # a cell that is text, NaN or infinite
    "out-of-range",            # temperature source outside its accepted range
    "magnitude-out-of-range",  # V outside -30..30, or BP-RP outside the G-to-V range
    "too-blue-for-dust",       # dereddening: bluer than any blackbody behind the dust can be
    "missing-dust",            # the E(B-V) / A_V cell of the dust column is empty
    "dust-out-of-range",       # E(B-V) (or A_V / R_V) negative or above 10 mag
)
OK, EXTRAPOLATED, BLUER_THAN_BLACKBODY, MISSING_TEMPERATURE, MISSING_MAGNITUDE, NOT_A_NUMBER, \
    OUT_OF_RANGE, MAGNITUDE_OUT_OF_RANGE, TOO_BLUE_FOR_DUST, MISSING_DUST, \
    DUST_OUT_OF_RANGE = range(len(STATUSES))
#: The last status code of a coloured row (codes up to it are coloured, the rest blank).
LAST_COLOURED = BLUER_THAN_BLACKBODY

SOURCES = ("temperature", "bv", "bp-rp")
#: What a dust column holds: E(B-V), or A_V (turned into E(B-V) = A_V / R_V, [Cardelli1989]
#: eq. 1, with the settings' R_V).
DUST_QUANTITIES = ("ebv", "av")
BANDS = ("V", "G")
#: Magnitudes the render path accepts (defined once, in starkiln.engine.eye.vision).
MAGNITUDE_MIN, MAGNITUDE_MAX = MAGNITUDE_RANGE
#: Runs with magnitudes and at most this many rows call the render path for every row:
#: cheaper than building the 2-D grid (about 1.5 s), and exactly the window's colours.
EXACT_ROWS_WITH_MAGNITUDE = 250_000
#: Runs with a dust column and at most this many rows are rendered exactly too: the
#: temperature x E(B-V) grid costs about as much to build (measured 6.7 s) as a million rows.
EXACT_ROWS_WITH_DUST = 250_000
#: Names of the appended columns (before the plan's prefix), in order.
OUTPUT_NAMES = ("r", "g", "b", "intensity", "status")


def status_counts(counts) -> dict:
    """Rows per status as a ``{status: rows}`` dict.

    Parameters
    ----------
    counts : array_like
        Row counts aligned with :data:`STATUSES` (as from ``numpy.bincount`` of the codes).

    Returns
    -------
    dict
        ``{"ok": ..., "extrapolated": ..., ...}``, every status, in the order of :data:`STATUSES`.

    References
    ----------
    The statuses are the project's own (:data:`STATUSES`).
    """
    return {s: int(c) for s, c in zip(STATUSES, counts)}


@dataclass(frozen=True)
class CataloguePlan:
    """What to read from each row and how to colour it (validated, picklable).

    Attributes
    ----------
    settings : Settings
        The one settings object (same as the window and ``starkiln colour``).
    source : ``temperature`` (K), ``bv`` (Johnson B-V) or ``bp-rp`` (Gaia BP-RP).
    source_column : column holding the temperature source.
    magnitude_column : column of apparent magnitudes, or None.
    magnitude_band : ``V`` (Johnson V) or ``G`` (Gaia G, converted to V).
    bp_rp_column : BP-RP column used by the G-to-V relation (defaults to
        ``source_column`` when the source is ``bp-rp``).
    magnitude : one magnitude for every row (instead of a column), or None.
    extrapolate_bp_rp : colour BP-RP outside 0.39-1.50 (status ``extrapolated``; relation
        model only).
    index_model : ``synthetic`` (default) or ``relation``: how B-V and BP-RP become
        temperatures (:func:`starkiln.engine.stars.temperature.temperature_from_index`).
    exact : call the render path for every row instead of the colour grid.
    prefix : text put before the names of the appended columns.
    linear_columns : working spaces (names from
        :data:`starkiln.engine.colour.displays.WORKING_SPACES`) whose scene-linear r, g, b
        are appended after the status (module docstring).
    threads : threads that colour parts of a chunk at once (numpy releases the GIL);
        0 (default) means one per core, up to 4. Dask workers use 1.
    deredden_ebv : E(B-V) (mag) of the dust the observed B-V or BP-RP column already holds,
        removed before colouring (:func:`starkiln.engine.path.deredden.deredden`, the law and
        R_V of ``settings``), or None. The settings then apply no dust
        (``settings.dust_ebv`` must be 0): the star is shown as it is without the dust.
    dust_column : column of per-star dust (E(B-V) or A_V, mag), or None.
    dust_quantity : ``ebv`` (default) or ``av``: what ``dust_column`` holds.
    """

    settings: Settings
    source: str
    source_column: str
    magnitude_column: str | None = None
    magnitude_band: str = "V"
    bp_rp_column: str | None = None
    magnitude: float | None = None
    extrapolate_bp_rp: bool = False
    exact: bool = False
    prefix: str = ""
    threads: int = 0
    linear_columns: tuple = ()
    index_model: str = "synthetic"
    deredden_ebv: float | None = None
    dust_column: str | None = None
    dust_quantity: str = "ebv"

    def __post_init__(self):
        from starkiln.engine.stars.temperature import check_index_model

        object.__setattr__(self, "index_model", check_index_model(self.index_model))
        if self.deredden_ebv is not None:
            from starkiln.engine.path.dust import check_ebv

            if self.source == "temperature":
                raise StarkilnError("dereddening applies only to a B-V or BP-RP column, not "
                                    "to temperatures")
            if self.settings.dust_ebv > 0.0:
                raise StarkilnError("dereddened colours are shown without the dust: the "
                                    "settings must apply none (dust_ebv 0)")
            object.__setattr__(self, "deredden_ebv", float(check_ebv(self.deredden_ebv,
                                                                     "E(B-V)")))
        if self.extrapolate_bp_rp and self.index_model != "relation":
            raise StarkilnError("--extrapolate-bp-rp applies only to --index-model relation "
                                "(the synthetic model covers BP-RP -0.6 to 14.82)")
        object.__setattr__(self, "linear_columns", check_linear_columns(self.linear_columns))
        if self.source not in SOURCES:
            raise StarkilnError(f"unknown temperature source {self.source!r}; accepted: "
                                f"{', '.join(SOURCES)}")
        band = str(self.magnitude_band).strip().upper()
        if band not in BANDS:
            raise StarkilnError(f"magnitude band {self.magnitude_band!r} unknown; accepted: V, G")
        object.__setattr__(self, "magnitude_band", band)
        if self.magnitude_column is not None and self.magnitude is not None:
            raise StarkilnError("give either a magnitude column or one magnitude, not both")
        if self.magnitude is not None:
            m = float(self.magnitude)
            if not (np.isfinite(m) and MAGNITUDE_MIN <= m <= MAGNITUDE_MAX):
                raise StarkilnError(f"magnitude {self.magnitude!r} is outside the accepted range "
                                    f"{MAGNITUDE_MIN:g} to {MAGNITUDE_MAX:g}")
            object.__setattr__(self, "magnitude", m)
        if self.dust_column is not None:
            self._check_dust()
        if self.source == "bp-rp" and self.bp_rp_column is None:
            object.__setattr__(self, "bp_rp_column", self.source_column)
        if band == "G":
            if not self.with_magnitude:
                raise StarkilnError("--magnitude-band G needs --magnitude-column")
            if self.bp_rp_column is None:
                raise StarkilnError("--magnitude-band G needs --bp-rp-column: the G-to-V "
                                    "relation (Riello et al. 2021) uses BP-RP")

    def _check_dust(self) -> None:
        """The dust column's rules (module docstring): a known quantity, and no fixed E(B-V)
        in the settings or dereddening beside it."""
        if self.dust_quantity not in DUST_QUANTITIES:
            raise StarkilnError(f"dust quantity {self.dust_quantity!r} unknown; accepted: "
                                "ebv, av")
        if self.deredden_ebv is not None:
            raise StarkilnError(f"a dust column ({self.dust_column!r}) and dereddening by a "
                                f"fixed E(B-V) ({self.deredden_ebv:g}) do not go together; "
                                "accepted: one of them")
        if self.settings.dust_ebv > 0.0:
            raise StarkilnError(f"a dust column ({self.dust_column!r}) and a fixed E(B-V) "
                                f"({self.settings.dust_ebv:g}, from --ebv, --av or the "
                                "settings) do not go together; accepted: one of them")

    @property
    def dust_line(self) -> str | None:
        """What the run took its dust from, for the summary and the file's metadata."""
        if self.dust_column is None:
            return None
        if self.dust_quantity == "av":
            return (f"dust: A_V from column {self.dust_column!r} (E(B-V) = A_V / R_V, R_V "
                    f"{self.settings.dust_rv:g}, law {self.settings.dust_law})")
        return (f"dust: E(B-V) from column {self.dust_column!r} (R_V "
                f"{self.settings.dust_rv:g}, law {self.settings.dust_law})")

    def for_rows(self, rows: int | None) -> "CataloguePlan":
        """This plan for a run of ``rows`` rows: exact for small runs with magnitudes or a
        dust column.

        Both engines call this with the total row count, so they colour alike.
        """
        if self.exact or rows is None:
            return self
        if ((self.with_magnitude and rows <= EXACT_ROWS_WITH_MAGNITUDE)
                or (self.dust_column is not None and rows <= EXACT_ROWS_WITH_DUST)):
            return dataclasses.replace(self, exact=True)
        return self

    @property
    def with_magnitude(self) -> bool:
        """True when rows carry magnitudes (night-vision colours and intensities)."""
        return self.magnitude_column is not None or self.magnitude is not None

    @property
    def input_columns(self) -> list[str]:
        """Names of the columns this plan reads, without repeats."""
        names = [self.source_column, self.magnitude_column,
                 self.bp_rp_column if self.magnitude_band == "G" else None, self.dust_column]
        out = []
        for n in names:
            if n is not None and n not in out:
                out.append(n)
        return out

    @property
    def output_columns(self) -> list[str]:
        """Names of the appended columns (with the prefix): r, g, b, intensity, status, then
        r, g, b of each linear working space."""
        return [self.prefix + n for n in OUTPUT_NAMES] + self.linear_names

    @property
    def linear_names(self) -> list[str]:
        """Names of the linear working-space columns (with the prefix), three per space."""
        return [f"{self.prefix}{c}_{space.replace('-', '_')}"
                for space in self.linear_columns for c in "rgb"]

    @property
    def linear_settings(self) -> tuple:
        """The settings of each linear working space: this look, that working space as target
        (its gamut the target's default unless the settings asked for one)."""
        return tuple(self.settings.replace(display=space) for space in self.linear_columns)


def check_linear_columns(spaces) -> tuple:
    """Working-space names for linear columns, canonical and without repeats, or an error.

    Parameters
    ----------
    spaces : str or sequence of str
        ``"acescg,lin-srgb"`` or ``("acescg", "lin-srgb")``; empty for none.

    Returns
    -------
    tuple of str

    References
    ----------
    :data:`starkiln.engine.colour.displays.WORKING_SPACES` (the names).
    """
    from starkiln.engine.colour.displays import WORKING_SPACES

    if isinstance(spaces, str):
        spaces = [p for p in spaces.split(",")]
    out = []
    for raw in spaces or ():
        name = str(raw).strip().lower()
        if name not in WORKING_SPACES:
            raise StarkilnError(f"linear columns: {str(raw).strip()!r} is not a working space; "
                                f"accepted: {', '.join(WORKING_SPACES)} (comma-separated)")
        if name not in out:
            out.append(name)
    return tuple(out)

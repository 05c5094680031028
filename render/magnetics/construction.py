"""A pickup's construction: its magnets, its steel and the strings above them.

Three arrangements (the pickup's axes: :mod:`render.magnetics`):

- ``magnet-blades``: a bar magnet stands inside each coil, magnetised along
  z (coil_a's south pole up, coil_b's north pole up);
- ``steel-blades``: a steel blade stands inside each coil, on a bar magnet
  lying under both coils, magnetised along x with its north pole under
  coil_b;
- ``steel-poles``: a row of steel screws stands inside each coil, on the
  same bar magnet.

So coil_b's field is reversed, as in every humbucker. With these poles a
string moving up raises the flux linkage of coil_a's turns (counter-clockwise
seen from +z): with ``hum_polarity`` +1 its EMF is positive, which matches
the default ``signal_polarity`` of +1 for coil_a and −1 for coil_b of designs
without a construction. The pole pieces'
(blades', screws', standing magnets') top faces sit at z = ``top`` (0 unless
given); a bar magnet under the coils touches the steel's bottom faces, and
is centred under the pickup. A screw is round: the cells of the solver
(:mod:`.steel`) are boxes, so it is cut into twelve square columns of its
cross-section's area (:func:`round_pole`); the same cut of a cylinder magnet
is checked against the closed form of its field on its axis (Derby & Olbert,
Am. J. Phys. 78(3), 2010) in the tests. At the strings' height the columns'
steps change the field by less than the screw's thread and slot do (our
estimate, no source).

The strings run along x, their spread centred on y = 0, lowest string at
−y (the bass side). Their magnetic cross-section is the core plus a share
of the wrap (:data:`WRAP_SHARE`).

Documented defaults:

- :data:`STEEL_PERMEABILITY` µr = 100 for the blades and screws, the value
  of :data:`render.impedance.materials.STEEL` (from memory: the incremental
  permeability of low-carbon steel at a magnet's bias scatters from about
  50 to several hundred);
- :data:`STRING_PERMEABILITY` µr = 100 for the strings' steel (from memory:
  cold-drawn high-carbon music wire; the transverse magnetisation barely
  depends on it, see :mod:`.strings`);
- :data:`STRING_SATURATION` µ0·Ms = 2.0 T for the strings' steel, the
  saturation of the Fröhlich–Kennelly curve it follows along its axis
  (:mod:`.strings`; from memory: iron saturates at about 2.15 T, and the
  cementite of a high-carbon steel, magnetically weaker, lowers it);
- :data:`WRAP_SHARE` 0.5 of a wound string's wrap annulus counts as
  magnetic (our estimate, no source: round wrap wire fills π/4 of its
  annulus, and the gaps between its turns break the magnetic path along
  the string).
"""

from __future__ import annotations

import json
import math
from dataclasses import asdict, dataclass

import numpy as np

from ..errors import InputError
from ..impedance.materials import STEEL
from .coil import CoilGeometry
from .magnets import GRADES, knee_warning
from .steel import Part

KINDS = ("magnet-blades", "steel-blades", "steel-poles")
STEEL_PERMEABILITY = STEEL.relative_permeability
STRING_PERMEABILITY = 100.0
STRING_SATURATION = 2.0  # T, µ0·Ms of the strings' steel (from memory)
WRAP_SHARE = 0.5
CLEARANCE = 1.0e-3  # m, the least gap between a string at rest and the pole pieces' tops
MODEL_VERSION = 5  # bump when the model's numbers change, so cached results are recomputed (3: the sensing function's slope terms; 4: the strings' polarisation kept; 5: the strings' steel saturates)

# Cell sizes of the solve (m): finer near the top faces, where the strings look.
TOP_SLAB = 3e-3  # height of the finely cut top slab of each pole piece
CELL_TOP = (1.25e-3, 2e-3, 0.75e-3)  # x, y, z in the top slab
CELL_BODY = (2.5e-3, 4e-3, 2.5e-3)  # below it, and in the bar magnet


@dataclass(frozen=True)
class Strings:
    """The strings over the pickup, lowest first, in SI units.

    cores : m, magnetic core diameters
    outers : m, outer diameters (equal to the core for a plain string)
    spacing : m, centre to centre at the pickup
    heights : m, gap between the coils' top faces (z = 0) and each string's underside at rest
    wrap_share : 0..1, share of a wound string's wrap counted as magnetic
    permeability : µr of the strings' steel (its initial permeability)
    saturation : T, the strings' steel's saturation polarisation µ0·Ms
    """

    cores: tuple
    outers: tuple
    spacing: float
    heights: tuple
    wrap_share: float = WRAP_SHARE
    permeability: float = STRING_PERMEABILITY
    saturation: float = STRING_SATURATION

    @property
    def count(self) -> int:
        return len(self.cores)

    @property
    def y(self) -> np.ndarray:
        """Each string's place across the pickup (m), lowest first: the spread centred on y = 0."""
        n = self.count
        return (np.arange(n) - (n - 1) / 2.0) * self.spacing

    def axis_z(self) -> np.ndarray:
        """Each string's axis height (m): its gap above z = 0 plus half its outer diameter."""
        return np.asarray(self.heights) + np.asarray(self.outers) / 2.0

    def areas(self) -> np.ndarray:
        """Magnetic cross-sections (m²): core plus ``wrap_share`` of the wrap's annulus."""
        from .strings import magnetic_area

        return np.array([magnetic_area(c, o, self.wrap_share) for c, o in zip(self.cores, self.outers)])


@dataclass(frozen=True)
class Construction:
    """Magnets, steel and strings of a pickup, in SI units.

    kind : one of :data:`KINDS`
    magnet : (width along x, length along y, height along z), m
    remanence : T, the magnets' remanent polarisation
    magnet_permeability : the magnets' recoil µr
    grade : the grade the remanence came from, or None
    steel : (width along x, length along y, height along z), m, a blade; for
        screws the first is the diameter (and the second is ignored); None for magnet-blades
    poles : number of screws per coil (steel-poles), else 0
    pole_spacing : m, centre to centre (steel-poles), else 0
    steel_permeability : µr of the blades and screws
    top : m, z of the pole pieces' top faces
    strings : :class:`Strings`
    """

    kind: str
    magnet: tuple
    remanence: float
    magnet_permeability: float
    strings: Strings
    grade: str | None = None
    steel: tuple | None = None
    poles: int = 0
    pole_spacing: float = 0.0
    steel_permeability: float = STEEL_PERMEABILITY
    top: float = 0.0

    def __post_init__(self):
        if self.kind not in KINDS:
            raise InputError(f"[construction] kind={self.kind!r}: expected one of {', '.join(repr(k) for k in KINDS)}")
        if self.kind == "magnet-blades" and self.steel is not None:
            raise InputError("[construction]: magnet-blades has no steel pieces; leave out steel_width, steel_length and steel_height")
        if self.kind != "magnet-blades" and self.steel is None:
            raise InputError(f"[construction] kind={self.kind!r}: give the steel's size (steel_width, steel_height{', steel_length' if self.kind == 'steel-blades' else ''})")
        if self.kind == "steel-poles" and (self.poles < 1 or self.pole_spacing <= 0):
            raise InputError("[construction]: steel-poles needs a number of poles and their spacing")
        low = [i for i, h in enumerate(self.strings.heights) if h < max(self.top, 0.0) + CLEARANCE]
        if low:
            i = low[0]
            raise InputError(
                f"[construction] string_height: string {self.strings.count - i} sits {self.strings.heights[i] * 1e3:.3g} mm above the coils' top faces, "
                f"less than {CLEARANCE * 1e3:g} mm above the pole pieces (top={self.top * 1e3:.3g} mm) and the coils; raise the strings or lower the poles"
            )

    # --- identity -------------------------------------------------------------
    def digest(self, *coils) -> str:
        """A hash of everything the field solve depends on: the construction, the coils given and the model version."""
        record = {"construction": asdict(self), "coils": [_coil_record(c) for c in coils], "model": MODEL_VERSION}
        from ..io.hashing import sha256_bytes

        return sha256_bytes(json.dumps(record, sort_keys=True, default=float).encode())

    def knee_warning(self) -> str | None:
        """One line when an AlNiCo grade's magnets work past their knee, where the model's straight line overstates them
        (:func:`render.magnetics.magnets.knee_warning`), else None."""
        if self.kind == "magnet-blades":
            return knee_warning(self.grade, self.remanence, self.magnet_permeability, self.magnet, 2, "each magnet blade")
        return knee_warning(self.grade, self.remanence, self.magnet_permeability, self.magnet, 0, "the bar magnet")

    def pole_reach(self) -> float:
        """m: how far the pole pieces reach each side of the middle across the strings (along y): a blade's
        half-length, or the outer screw's outer edge."""
        if self.kind == "magnet-blades":
            return self.magnet[1] / 2.0
        assert self.steel is not None
        if self.kind == "steel-blades":
            return self.steel[1] / 2.0
        return (self.poles - 1) / 2.0 * self.pole_spacing + self.steel[0] / 2.0

    def reach_warning(self, window_length: float | None = None) -> str | None:
        """One line when the outer strings lie beyond the pole pieces' ends across the strings (:meth:`pole_reach`),
        where only the pole pieces' fringe field reaches them, else None (a plausibility warning, not a refusal).

        window_length : m, the shorter coil window's length across the strings, or None: a blade longer than it
            cannot be the fix, and the hint says so
        """
        reach, y = self.pole_reach(), self.strings.y
        n = self.strings.count
        beyond = {n - i: float(abs(v) - reach) for i, v in enumerate(y) if abs(v) > reach + 1e-9}  # numbered from the treble side
        if not beyond:
            return None
        named = sorted(beyond)
        far = max(beyond.values())
        how = f"{far * 1e3:.3g} mm" if far - min(beyond.values()) < 1e-6 else f"up to {far * 1e3:.3g} mm"
        piece = {"magnet-blades": "the magnet blades reach", "steel-blades": "the steel blades reach", "steel-poles": "the outer screws' edges lie"}[self.kind]
        source = {"magnet-blades": "magnet_length", "steel-blades": "steel_length", "steel-poles": "poles, pole_spacing and steel_width"}[self.kind]
        y_out = float(np.max(np.abs(y)))
        spacing = 2.0 * reach / (n - 1)
        need = 2.0 * y_out  # a blade as long as the strings' spread
        if self.kind == "steel-poles":
            longer = f"pole_spacing at least {2.0 * (y_out - self.steel[0] / 2.0) / (self.poles - 1) * 1e3:.3g} mm" if self.poles > 1 else None  # type: ignore[index]
        else:
            key = "magnet_length" if self.kind == "magnet-blades" else "steel_length"
            room = f", in a window at least that long (window_length {window_length * 1e3:.3g} mm)" if window_length is not None and need > window_length else ""
            longer = f"{key} at least {need * 1e3:.3g} mm{room}"
        strings = f"strings {', '.join(map(str, named[:-1]))} and {named[-1]}" if len(named) > 1 else f"string {named[0]}"
        return (
            f"[construction] {strings} {'lie' if len(named) > 1 else 'lies'} {how} beyond the pole pieces' ends across the strings ({piece} {reach * 1e3:.3g} mm"
            f" each side of the middle, from {source}; string_spacing {self.strings.spacing * 1e3:.3g} mm puts the outer strings at {y_out * 1e3:.3g} mm):"
            f" {'they are' if len(named) > 1 else 'it is'} sensed only by the pole pieces' fringe field; give string_spacing at most {spacing * 1e3:.3g} mm" + (f", or {longer}" if longer else "")
        )

    def _overlaps_winding(self, name: str, geom: CoilGeometry) -> None:
        """Refuse pole pieces (z from top − their height to top) that stand wholly above or below the coil's winding (z from −its height to 0)."""
        h = self.magnet[2] if self.kind == "magnet-blades" else self.steel[2]  # type: ignore[index]
        if self.top - h < 0.0 < self.top + geom.height:
            return
        piece = {"magnet-blades": "magnet blade", "steel-blades": "steel blade", "steel-poles": "screws"}[self.kind]
        where = "above" if self.top - h >= 0.0 else "below"
        height = "magnet_height" if self.kind == "magnet-blades" else "steel_height"
        raise InputError(
            f"[construction] top={self.top * 1e3:.3g} mm: {name}'s {piece} ({height} {h * 1e3:.3g} mm) stands wholly {where} its winding"
            f" (z = {-geom.height * 1e3:.3g} mm to 0); give top above {-geom.height * 1e3:.3g} mm and below {h * 1e3:.3g} mm so that it passes through the coil"
        )

    # --- the parts --------------------------------------------------------------
    def parts(self, centre_a, centre_b, geometry_a: CoilGeometry, geometry_b: CoilGeometry, *, refine: float = 1.0) -> tuple[Part, ...]:
        """The magnets and steel as blocks to solve, for coils centred at ``centre_a`` and ``centre_b`` (m).

        refine : multiplies the number of cells along each side (convergence checks; at most
            :data:`render.magnetics.steel.MAX_CELLS` cells are solved)
        """
        xa, xb = float(centre_a[0]), float(centre_b[0])
        if abs(xb - xa) < (geometry_a.width + geometry_b.width) / 2 - 1e-9:
            raise InputError(
                f"[coil_a] and [coil_b] position put the coils' centres {abs(xb - xa) * 1e3:.3g} mm apart, less than half their widths together"
                f" ({(geometry_a.width + geometry_b.width) / 2 * 1e3:.3g} mm): the bobbins would overlap; move them apart or make them narrower"
            )
        north = 1.0 if xb > xa else -1.0  # the bar magnet's north pole under coil_b
        out: list[Part] = []
        chi_m = self.magnet_permeability - 1.0
        chi_s = self.steel_permeability - 1.0
        for name, x0, geom, up in (("coil_a", xa, geometry_a, -1.0), ("coil_b", xb, geometry_b, 1.0)):
            self._overlaps_winding(name, geom)
            if self.kind == "magnet-blades":
                w, length, h = self.magnet
                _fits(name, geom, w, length, "magnet_width and magnet_length")
                out += _stack(f"{name} magnet", x0, 0.0, w, length, self.top, h, chi_m, (0.0, 0.0, up * self.remanence), refine)
            elif self.kind == "steel-blades":
                assert self.steel is not None
                w, length, h = self.steel
                _fits(name, geom, w, length, "steel_width and steel_length")
                out += _stack(f"{name} blade", x0, 0.0, w, length, self.top, h, chi_s, (0.0, 0.0, 0.0), refine)
            else:
                assert self.steel is not None
                d, _, h = self.steel
                span = (self.poles - 1) * self.pole_spacing + d
                _fits(name, geom, d, span, "steel_width (the screws' diameter), poles and pole_spacing")
                for i in range(self.poles):
                    y = (i - (self.poles - 1) / 2.0) * self.pole_spacing
                    # numbered from the treble side (+y), as guitarists number the strings: pole 1 under string 1
                    out += round_pole(f"{name} pole {self.poles - i}", x0, y, d, self.top, h, chi_s, (0.0, 0.0, 0.0), refine)
        if self.kind != "magnet-blades":
            assert self.steel is not None
            w, length, h = self.magnet
            z_top = self.top - self.steel[2]
            lo, hi = (-w / 2, -length / 2, z_top - h), (w / 2, length / 2, z_top)
            inner = min(abs(xa), abs(xb)) - self.steel[0] / 2  # the steel's edge nearest the middle, along x
            if w / 2 <= inner + 1e-9:
                raise InputError(
                    f"[construction]: the bar magnet ({w * 1e3:.3g} mm along the string, from magnet_width) does not reach under the pole pieces,"
                    f" whose nearest edges lie {inner * 1e3:.3g} mm each side of the middle; make magnet_width more than {2 * inner * 1e3:.3g} mm so its poles lie against the steel"
                )
            for name, x0, geom in (("coil_a", xa, geometry_a), ("coil_b", xb, geometry_b)):
                if _reaches_winding(lo, hi, x0, geom):
                    raise InputError(
                        f"[construction]: the bar magnet's top (z = {z_top * 1e3:.3g} mm, from top and steel_height) reaches into {name}'s winding,"
                        f" which runs down to z = {-geom.height * 1e3:.3g} mm; make steel_height at least {(geom.height + self.top) * 1e3:.3g} mm or [{name}.geometry] height smaller"
                    )
            cells = _count((w, length, h), CELL_BODY, refine)
            out.append(Part("bar magnet", (-w / 2, -length / 2, z_top - h), (w / 2, length / 2, z_top), chi_m, (north * self.remanence, 0.0, 0.0), cells))
        return tuple(out)


def _reaches_winding(lo, hi, x0: float, geom: CoilGeometry) -> bool:
    """Whether the box [lo, hi] (m) reaches into a coil's winding: the ring between its window and its
    outline (centred on x0, y = 0), from z = −height to 0."""
    eps = 1e-9
    if hi[2] <= -geom.height + eps or lo[2] >= -eps:
        return False
    if hi[0] <= x0 - geom.width / 2 + eps or lo[0] >= x0 + geom.width / 2 - eps or hi[1] <= -geom.length / 2 + eps or lo[1] >= geom.length / 2 - eps:
        return False  # beside the outline
    in_window = lo[0] >= x0 - geom.window_width / 2 - eps and hi[0] <= x0 + geom.window_width / 2 + eps and abs(lo[1]) <= geom.window_length / 2 + eps and abs(hi[1]) <= geom.window_length / 2 + eps
    return not in_window


def _coil_record(c) -> object:
    if isinstance(c, CoilGeometry):
        return {f: getattr(c, f) for f in ("turns", "length", "width", "window_length", "window_width", "height")}
    return c


def _fits(name: str, geom: CoilGeometry, width: float, length: float, keys: str) -> None:
    """Refuse a pole piece that does not fit in the coil's window, naming the keys that size it."""
    if width > geom.window_width * (1 + 1e-9) or length > geom.window_length * (1 + 1e-9):
        raise InputError(
            f"[construction]: the pole pieces ({width * 1e3:.3g} mm along the string × {length * 1e3:.3g} mm across, from {keys}) do not fit in "
            f"{name}'s window ({geom.window_width * 1e3:.3g} × {geom.window_length * 1e3:.3g} mm); make them smaller or [{name}.geometry]'s window_width and window_length larger"
        )


def _count(size, cell, refine: float) -> tuple:
    return tuple(max(1, int(math.ceil(s / c * refine - 1e-9))) for s, c in zip(size, cell))


def round_pole(name, x0, y0, diameter, top, h, chi, remanence, refine: float = 1.0) -> list[Part]:
    """A round pole piece (a screw, or a cylinder magnet) standing with its top face at ``top``, as square columns.

    The top slab (where the strings look; :data:`TOP_SLAB` deep) is the 4 × 4
    grid of columns of side d·√(π/48) without its four corners: twelve
    columns of the circle's area π·d²/4, within 2 % of its diameter, each cut
    as :func:`_stack` cuts a slab. Below it the body is a square prism of the
    same area (side d·√π/2), cut as a pole's body: its shape matters little
    that far below the strings, and its cells are few.
    x0, y0 : m, the axis; diameter, h : m; chi : χ; remanence : (Jx, Jy, Jz), T
    """
    slab = min(h, TOP_SLAB)
    side = diameter * math.sqrt(math.pi / 48.0)
    nz = _count((side, side, slab), CELL_TOP, refine)[2]
    r = int(math.ceil(refine - 1e-9))  # columns split further when refined
    # the twelve columns as three blocks of equal cells (fewer blocks: a faster solve): the middle
    # two rows of four, and one pair of columns on either side of them
    parts: list[Part] = [
        Part(f"{name} top", (x0 - side, y0 - 2 * side, top - slab), (x0 + side, y0 + 2 * side, top), chi, remanence, (2 * r, 4 * r, nz)),
        Part(f"{name} top", (x0 - 2 * side, y0 - side, top - slab), (x0 - side, y0 + side, top), chi, remanence, (r, 2 * r, nz)),
        Part(f"{name} top", (x0 + side, y0 - side, top - slab), (x0 + 2 * side, y0 + side, top), chi, remanence, (r, 2 * r, nz)),
    ]
    if h > slab * (1 + 1e-9):
        w = diameter * math.sqrt(math.pi) / 2.0
        parts.append(Part(f"{name} body", (x0 - w / 2, y0 - w / 2, top - h), (x0 + w / 2, y0 + w / 2, top - slab), chi, remanence, _count((w, w, h - slab), CELL_BODY, refine)))
    return parts


def _stack(name, x0, y0, w, length, top, h, chi, remanence, refine) -> list[Part]:
    """A pole piece standing with its top face at ``top``: a finely cut top slab over a coarser body."""
    slab = min(h, TOP_SLAB)
    parts = [
        Part(f"{name} top", (x0 - w / 2, y0 - length / 2, top - slab), (x0 + w / 2, y0 + length / 2, top), chi, remanence, _count((w, length, slab), CELL_TOP, refine)),
    ]
    if h > slab * (1 + 1e-9):
        parts.append(Part(f"{name} body", (x0 - w / 2, y0 - length / 2, top - h), (x0 + w / 2, y0 + length / 2, top - slab), chi, remanence, _count((w, length, h - slab), CELL_BODY, refine)))
    return parts


def magnet_figures(grade: str | None, remanence: float | None, permeability: float | None) -> tuple[float, float]:
    """(remanence T, recoil µr) from a grade and/or given values; the given ones win."""
    if grade is not None and grade not in GRADES:
        raise InputError(f"[construction] magnet_grade={grade!r}: expected one of {', '.join(repr(g) for g in GRADES)}, or give remanence")
    g = GRADES.get(grade) if grade else None
    if remanence is None and g is None:
        raise InputError('[construction]: give magnet_grade (e.g. "ceramic8") or remanence (e.g. "0.39T")')
    br = remanence if remanence is not None else g.remanence  # type: ignore[union-attr]
    mu = permeability if permeability is not None else (g.recoil_permeability if g else 1.05)
    return float(br), float(mu)

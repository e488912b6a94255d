"""Optical materials: dispersion models and the named materials lenses are made of.

Every model maps wavelength in nanometres (scalar or array) to refractive
index. The published formulas take wavelength in micrometres; the
conversion happens inside each model.

References
----------
.. [1] I. H. Malitson, "Interspecimen comparison of the refractive index of
   fused silica", J. Opt. Soc. Am. 55, 1205-1208 (1965).
.. [2] S. N. Kasarova, N. G. Sultanova, C. D. Ivanov, I. D. Nikolov,
   "Analysis of the dispersion of optical plastic materials", Optical
   Materials 29, 1481-1490 (2007).
.. [3] N. Sultanova, S. Kasarova, I. Nikolov, "Dispersion properties of
   optical polymers", Acta Physica Polonica A 116, 585-587 (2009).
.. [4] M. Rubin, "Optical properties of soda lime silica glasses", Solar
   Energy Materials 12, 275-288 (1985).
.. [5] W. J. Smith, Modern Optical Engineering, 4th ed. (2008), ch. 7
   (Abbe number V_d = (n_d - 1) / (n_F - n_C), Fraunhofer lines).
.. [6] M. J. Weber, Handbook of Optical Materials (CRC Press, 2003), sec. 2.4
   (fused silica, density 2.20 g/cm^3) and sec. 2.2 (commercial crown glasses of the
   soda-lime type, about 2.5 g/cm^3); values as recalled from the handbook, not re-read.
.. [7] J. D. Lytle, "Polymeric optics", in Handbook of Optics, 2nd ed., vol. II
   (McGraw-Hill, 1995), ch. 34, table of physical properties: PMMA 1.19 g/cm^3,
   polycarbonate 1.20 g/cm^3; values as recalled from the handbook, not re-read.
.. [8] J. H. Gladstone and T. P. Dale, "Researches on the refraction, dispersion, and
   sensitiveness of liquids", Phil. Trans. R. Soc. London 153, 317-343 (1863):
   (n - 1) / density is nearly constant for a family of materials.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from cloakview.optics.errors import InputError

#: Fraunhofer F, d and C lines [nm] (Smith [5]).
F_LINE_NM = 486.13
D_LINE_NM = 587.56
C_LINE_NM = 656.27


def nearest_to_d_line(wavelengths_nm) -> float:
    """The wavelength [nm] of a set closest to the d line (the design wavelength)."""
    return min(wavelengths_nm, key=lambda w: abs(w - D_LINE_NM))


def _micrometres(wavelength_nm):
    return np.asarray(wavelength_nm, dtype=np.float64) * 1e-3


@dataclass(frozen=True)
class Sellmeier:
    """Sellmeier model n^2 - 1 = sum B_i L^2 / (L^2 - C_i^2), L in micrometres.

    Parameters
    ----------
    b : tuple of float
        Oscillator strengths [dimensionless].
    c : tuple of float
        Resonance wavelengths [micrometres] (squared in the formula).

    References
    ----------
    .. [1] Malitson (1965), the form used for fused silica.
    """

    b: tuple[float, ...]
    c: tuple[float, ...]

    def index(self, wavelength_nm):
        """Refractive index at ``wavelength_nm`` [nm]."""
        lam2 = _micrometres(wavelength_nm) ** 2
        n2 = 1.0 + sum(bi * lam2 / (lam2 - ci * ci) for bi, ci in zip(self.b, self.c, strict=True))
        return np.sqrt(n2)


@dataclass(frozen=True)
class QuadraticInverseQuadratic:
    """Model n = a + b L^2 + c / L^2, L in micrometres (Rubin's soda-lime form).

    References
    ----------
    .. [1] Rubin (1985), soda-lime silica glass, visible range.
    """

    a: float
    b: float
    c: float

    def index(self, wavelength_nm):
        """Refractive index at ``wavelength_nm`` [nm]."""
        lam2 = _micrometres(wavelength_nm) ** 2
        return self.a + self.b * lam2 + self.c / lam2


@dataclass(frozen=True)
class IndexSquaredSeries:
    """Model n^2 = A0 + A1 L^2 + A2 L^-2 + A3 L^-4 + ..., L in micrometres.

    References
    ----------
    .. [1] Kasarova et al. (2007), the form fitted to optical plastics.
    """

    coefficients: tuple[float, ...]

    def index(self, wavelength_nm):
        """Refractive index at ``wavelength_nm`` [nm]."""
        lam2 = _micrometres(wavelength_nm) ** 2
        a = self.coefficients
        n2 = a[0] + a[1] * lam2
        for k, ak in enumerate(a[2:], start=1):
            n2 = n2 + ak * lam2 ** (-k)
        return np.sqrt(n2)


@dataclass(frozen=True)
class Cauchy:
    """Model n = A + B / L^2 + C / L^4, L in micrometres.

    Use :meth:`through_points` to build one from measured indices and
    :meth:`from_abbe` to build one from a catalogue-style (n_d, V_d) pair.

    References
    ----------
    .. [1] E. Hecht, Optics, 5th ed. (2017), sec. 3.5 (Cauchy's formula).
    .. [2] Smith (2008), ch. 7: V_d = (n_d - 1) / (n_F - n_C).
    """

    a: float
    b: float
    c: float = 0.0

    def index(self, wavelength_nm):
        """Refractive index at ``wavelength_nm`` [nm]."""
        inv2 = 1.0 / _micrometres(wavelength_nm) ** 2
        return self.a + self.b * inv2 + self.c * inv2 * inv2

    @classmethod
    def fit(cls, wavelengths_nm, indices, terms: int = 3) -> Cauchy:
        """Least-squares Cauchy model (``terms`` = 2 or 3) to measured (wavelength, index) points.

        With as many points as terms the model passes through them exactly.
        """
        inv2 = 1.0 / _micrometres(np.asarray(wavelengths_nm, float)) ** 2
        if not 2 <= terms <= 3 or len(inv2) < terms:
            raise ValueError(f"a {terms}-term Cauchy fit needs at least {terms} points")
        columns = [np.ones_like(inv2), inv2, inv2 * inv2][:terms]
        coeffs = np.linalg.lstsq(np.stack(columns, axis=1), np.asarray(indices, float),
                                 rcond=None)[0]
        return cls(*map(float, coeffs))

    @classmethod
    def from_abbe(cls, nd: float, vd: float) -> Cauchy:
        """Return the two-term Cauchy model with d-line index ``nd`` and Abbe number ``vd``."""
        if not (np.isfinite(nd) and 1.0 < nd < 3.0):
            raise InputError("nd", nd, "index at 587.6 nm must lie between 1 and 3")
        if not (np.isfinite(vd) and 10.0 <= vd <= 120.0):
            raise InputError("Vd", vd, "Abbe number must lie between 10 and 120")
        spread = (nd - 1.0) / vd  # n_F - n_C
        b = spread / (_micrometres(F_LINE_NM) ** -2 - _micrometres(C_LINE_NM) ** -2)
        return cls(nd - b * _micrometres(D_LINE_NM) ** -2, float(b))


@dataclass(frozen=True)
class ConstantIndex:
    """Non-dispersive medium of index ``n`` (air is taken as 1.0)."""

    n: float

    def index(self, wavelength_nm):
        """Refractive index at ``wavelength_nm`` [nm] (the same at every wavelength)."""
        return np.full(np.shape(wavelength_nm), self.n, dtype=np.float64)


@dataclass(frozen=True)
class Material:
    """A named optical material.

    Parameters
    ----------
    name : str
        Short name used in scene files and on the command line.
    dispersion : object
        Any model above: ``dispersion.index(wavelength_nm)`` gives the index.
    density_g_cm3 : float
        Density [g/cm^3], for lens mass.
    source : str
        Where the dispersion data come from.
    """

    name: str
    dispersion: object
    density_g_cm3: float
    source: str

    def index(self, wavelength_nm):
        """Refractive index at ``wavelength_nm`` [nm]."""
        return self.dispersion.index(wavelength_nm)

    def abbe_number(self) -> float:
        """Abbe number V_d = (n_d - 1) / (n_F - n_C) (Smith [5])."""
        nf, nd, nc = (float(self.index(w)) for w in (F_LINE_NM, D_LINE_NM, C_LINE_NM))
        return (nd - 1.0) / (nf - nc)


AIR = Material("air", ConstantIndex(1.0), 0.0012, "taken as 1.0 (common practice)")

#: Polycarbonate, all eight measured indices of Sultanova et al. 2009 [3], table of
#: optical polymers (the first wavelength printed there as 436.8 nm, read here as the
#: mercury g line, 435.8 nm). The paper gives V_d 29.1; a three-term Cauchy fit to these
#: points gives 27.7, within what indices printed to three decimals allow (about +-1.4).
SULTANOVA_PC_NM = (435.8, 486.1, 587.6, 632.8, 703.0, 833.0, 879.0, 1052.0)
SULTANOVA_PC_N = (1.612, 1.599, 1.585, 1.580, 1.575, 1.569, 1.568, 1.565)

#: Named materials; densities from the handbooks [6], [7].
MATERIALS: dict[str, Material] = {
    m.name: m
    for m in (
        Material(
            "fused-silica",
            Sellmeier((0.6961663, 0.4079426, 0.8974794), (0.0684043, 0.1162414, 9.896161)),
            2.20,
            "Malitson 1965 Sellmeier, 20 C; density Weber 2003",
        ),
        Material(
            "soda-lime",
            QuadraticInverseQuadratic(1.5130, -0.003169, 0.003962),
            2.5,
            "Rubin 1985; density Weber 2003",
        ),
        Material(
            "acrylic",
            IndexSquaredSeries(
                (2.399964, -8.308636e-2, -1.919569e-1, 8.720608e-2, -1.666411e-2, 1.169519e-3)
            ),
            1.19,
            "Kasarova et al. 2007 (PMMA); density Lytle 1995",
        ),
        Material(
            "polycarbonate",
            Cauchy.fit(SULTANOVA_PC_NM, SULTANOVA_PC_N),
            1.20,
            "Cauchy fit to the 8 indices of Sultanova et al. 2009; density Lytle 1995",
        ),
    )
}


#: Spans of n_d and V_d accepted for a material given as ``ND/VD``: optical glasses and
#: plastics lie within about n_d 1.3-2.1 and V_d 15-100 (common practice, e.g. the
#: n_d-V_d glass chart in W. J. Smith, Modern Optical Engineering, 4th ed., ch. 7).
ND_RANGE = (1.3, 2.1)
VD_RANGE = (15.0, 100.0)


#: Specific refractivity (n_d - 1) / density of silicate glasses [cm^3/g], Gladstone and
#: Dale [8], computed here from the two glasses above: fused silica 0.4585 / 2.20 = 0.208,
#: soda-lime 0.5234 / 2.5 = 0.209. Lead-rich flints fall lower (about 0.18), plastics far
#: higher (PMMA 0.41), so the estimate suits crown-type glasses only.
GLADSTONE_DALE_CM3_G = 0.2085
DENSITY_RANGE = (0.8, 7.0)


def gladstone_dale_density(nd: float) -> float:
    """Estimated density [g/cm^3] of a silicate glass of d-line index ``nd`` ([8])."""
    return (nd - 1.0) / GLADSTONE_DALE_CM3_G


def material_by_name(name: str, key: str = "material") -> Material:
    """Return a named material, or one built from ``"ND/VD"`` or ``"ND/VD/DENSITY"``.

    ``ND/VD`` (e.g. ``"1.52/60"``) uses :meth:`Cauchy.from_abbe`; its density [g/cm^3] is
    the third value when given (``"1.52/60/2.5"``), else estimated from n_d by
    :func:`gladstone_dale_density` (for crown-type glasses), and the material's
    ``source`` says which.

    Raises
    ------
    InputError
        If the name is unknown and is not such a triple.
    """
    if isinstance(name, Material):
        return name
    text = str(name).strip().lower()
    if text in MATERIALS:
        return MATERIALS[text]
    if text.count("/") in (1, 2):
        try:
            values = [float(part) for part in text.split("/")]
        except ValueError:
            values = None
        if values is not None:
            nd, vd = values[:2]
            if not (ND_RANGE[0] <= nd <= ND_RANGE[1] and VD_RANGE[0] <= vd <= VD_RANGE[1]):
                raise InputError(key, name, f"n_d must lie in {ND_RANGE[0]:g}-{ND_RANGE[1]:g} "
                                 f"and V_d in {VD_RANGE[0]:g}-{VD_RANGE[1]:g}, the span of "
                                 "real optical glasses and plastics")
            if len(values) == 3:
                density = values[2]
                if not DENSITY_RANGE[0] <= density <= DENSITY_RANGE[1]:
                    raise InputError(key, name, f"density must lie in {DENSITY_RANGE[0]:g}-"
                                     f"{DENSITY_RANGE[1]:g} g/cm3")
                source = f"n_d and V_d given; density {density:g} g/cm3 given"
            else:
                density = gladstone_dale_density(nd)
                source = (f"n_d and V_d given; density {density:.2f} g/cm3 estimated from "
                          "n_d (Gladstone-Dale, crown-type glass): give ND/VD/DENSITY for "
                          "the supplier's value")
            return Material(text, Cauchy.from_abbe(nd, vd), density, source)
    known = ", ".join(sorted(MATERIALS))
    raise InputError(key, name, f"unknown material; use one of {known}, ND/VD like 1.52/60, "
                     "or ND/VD/DENSITY like 1.52/60/2.5")

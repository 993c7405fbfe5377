r"""Initial–final mass relations: the remnant left by a star of given initial mass.

A star of initial mass m (Msun) that has finished its life leaves

- a white dwarf of mass :math:`w_0 + w_1 m` for :math:`m < m_{\rm WD}`,
- a neutron star of fixed mass :math:`m_{\rm NS}` for
  :math:`m_{\rm WD} \le m < m_{\rm BH}`,
- a black hole of mass :math:`f_{\rm BH}\,m` for :math:`m \ge m_{\rm BH}`.

The relation is piecewise linear in m, so its integral against any IMF is a
sum of IMF numbers and masses over fixed intervals (exact, closed form).
"""

from __future__ import annotations

import dataclasses

import jax
import jax.numpy as jnp

from lensinfer.stellar._integrals import as_float
from lensinfer.stellar._units import strip_unit

__all__ = ["NAMED_REMNANT_RELATIONS", "RemnantMassRelation", "get_remnant_relation"]


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class RemnantMassRelation:
    r"""A piecewise-linear initial–final (remnant) mass relation.

    .. math::

        m_{\rm rem}(m) =
        \begin{cases}
          w_0 + w_1\,m     & m < m_{\rm WD}              \quad\text{(white dwarfs)}, \\
          m_{\rm NS}       & m_{\rm WD} \le m < m_{\rm BH} \quad\text{(neutron stars)}, \\
          f_{\rm BH}\,m    & m \ge m_{\rm BH}            \quad\text{(black holes)}.
        \end{cases}

    All fields are data (differentiable).  Build one with
    :meth:`kalirai08` (the default of the mass-factor computation) or
    :meth:`renzini_ciotti93`, or by hand.

    Attributes
    ----------
    wd_intercept : float
        :math:`w_0` in Msun.
    wd_slope : float
        :math:`w_1` (dimensionless).
    wd_max_initial_mass : float
        :math:`m_{\rm WD}` in Msun, the most massive white-dwarf progenitor.
    ns_mass : float
        :math:`m_{\rm NS}` in Msun.
    bh_min_initial_mass : float
        :math:`m_{\rm BH}` in Msun, the least massive black-hole progenitor.
    bh_mass_fraction : float
        :math:`f_{\rm BH}`, black-hole mass over progenitor mass.

    References
    ----------
    Kalirai, J. S., Hansen, B. M. S., Kelson, D. D., et al. 2008, ApJ, 676, 594
    (white dwarfs: m_f = (0.109 ± 0.007) m_i + (0.394 ± 0.025) Msun, fitted for
    initial masses ~1.2-6.5 Msun).
    Renzini, A., & Ciotti, L. 1993, ApJ, 416, L49 (m_WD = 0.48 + 0.077 m_i for
    m_i < 8 Msun; 1.4 Msun neutron stars for 8 <= m_i < 40 Msun; black holes of
    0.5 m_i above 40 Msun).  Both quoted from memory of the papers.
    """

    wd_intercept: jax.Array
    wd_slope: jax.Array
    wd_max_initial_mass: jax.Array = 8.0
    ns_mass: jax.Array = 1.4
    bh_min_initial_mass: jax.Array = 40.0
    bh_mass_fraction: jax.Array = 0.5

    @classmethod
    def kalirai08(cls) -> RemnantMassRelation:
        """White dwarfs from Kalirai et al. (2008); NS and BH from Renzini & Ciotti (1993)."""
        return cls(wd_intercept=0.394, wd_slope=0.109)

    @classmethod
    def renzini_ciotti93(cls) -> RemnantMassRelation:
        """All three branches from Renzini & Ciotti (1993)."""
        return cls(wd_intercept=0.48, wd_slope=0.077)

    def segments(self):
        """The relation as ((c0, c1, lo, hi), ...): m_rem = c0 + c1 m on [lo, hi).

        The last segment's ``hi`` is +inf; integrals clip it to the IMF range.
        """
        m_wd = as_float(self.wd_max_initial_mass)
        m_bh = as_float(self.bh_min_initial_mass)
        zero = jnp.zeros(())
        return (
            (as_float(self.wd_intercept), as_float(self.wd_slope), zero, m_wd),
            (as_float(self.ns_mass), zero, m_wd, m_bh),
            (zero, as_float(self.bh_mass_fraction), m_bh, jnp.asarray(jnp.inf)),
        )

    def final_mass(self, initial_mass_msun):
        """Remnant mass in Msun for a star of the given initial mass (Msun).

        Parameters
        ----------
        initial_mass_msun : float or array
            Initial (zero-age main-sequence) mass in Msun.

        Returns
        -------
        float or array
            Mass of the white dwarf, neutron star or black hole, in Msun.
        """
        m = as_float(strip_unit(initial_mass_msun, "Msun"))
        out = jnp.zeros_like(m)
        for c0, c1, lo, hi in self.segments():
            out = jnp.where((m >= lo) & (m < hi), c0 + c1 * m, out)
        return out


#: Remnant relations that can be asked for by name.
NAMED_REMNANT_RELATIONS: dict[str, str] = {
    "kalirai08": "white dwarfs: Kalirai et al. (2008); NS/BH: Renzini & Ciotti (1993)",
    "renzini_ciotti93": "Renzini & Ciotti (1993) for white dwarfs, neutron stars, black holes",
}


def get_remnant_relation(relation) -> RemnantMassRelation:
    """Return a remnant relation by name, or pass a relation object through.

    Parameters
    ----------
    relation : str or RemnantMassRelation
        ``"kalirai08"`` or ``"renzini_ciotti93"`` (see
        :data:`NAMED_REMNANT_RELATIONS`), or an object.

    Raises
    ------
    ValueError
        For an unknown name.
    """
    if isinstance(relation, RemnantMassRelation):
        return relation
    if isinstance(relation, str):
        key = relation.strip().lower()
        if key == "kalirai08":
            return RemnantMassRelation.kalirai08()
        if key == "renzini_ciotti93":
            return RemnantMassRelation.renzini_ciotti93()
        raise ValueError(
            f"unknown remnant relation {relation!r}; accepted names are "
            f"{', '.join(map(repr, NAMED_REMNANT_RELATIONS))}, or a RemnantMassRelation"
        )
    raise TypeError(
        f"expected a remnant-relation name (str) or a RemnantMassRelation, "
        f"got {type(relation).__name__}: {relation!r}"
    )

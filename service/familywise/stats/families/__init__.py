"""The follow-up families: which groups differ, by how much, with what guarantee.

* :func:`pairwise` — all pairs (Tukey-Kramer, LSD, Bonferroni, Šidák, Holm,
  Games-Howell, Benjamini-Hochberg, Dunn), with the compact letter display;
* :func:`versus_control` — each group against a control (Dunnett, single step
  and step-down; two-sided or one-sided);
* :func:`versus_best` — each group against the best of the others (Hsu's MCB);
* :func:`contrast_family` — planned or post-hoc contrasts (none, Bonferroni,
  Šidák, Holm, multivariate t, Scheffé).

Each returns a :class:`FamilyResult` of :class:`Comparison` rows.
"""

from familywise.stats.families._common import Comparison, FamilyResult
from familywise.stats.families.best import versus_best
from familywise.stats.families.contrast_family import contrast_family
from familywise.stats.families.control import versus_control
from familywise.stats.families.pairwise import pairwise

__all__ = ["Comparison", "FamilyResult", "contrast_family", "pairwise", "versus_best", "versus_control"]

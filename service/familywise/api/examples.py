"""Worked examples for the schema and the README.

The scenario is invented: an enzyme-activity plate assay in which the
specific activity (U/mg) of one enzyme preparation is measured in six
replicate wells for each of five buffer formulations. The "balanced" plate
has every well; on the "unbalanced" plate some wells were lost.
"""

from __future__ import annotations

BUFFER_PLATE = {
    "groups": [
        {"label": "reference buffer", "values": [41.2, 43.8, 42.5, 40.9, 44.1, 42.0]},
        {"label": "phosphate pH 7.0", "values": [44.9, 46.3, 45.1, 47.2, 45.8, 44.6]},
        {"label": "HEPES pH 7.5", "values": [48.7, 50.2, 49.5, 47.9, 51.0, 49.1]},
        {"label": "Tris pH 8.0", "values": [43.1, 42.2, 44.6, 41.8, 43.9, 42.7]},
        {"label": "citrate pH 6.0", "values": [38.4, 39.9, 37.6, 40.2, 38.8, 39.1]},
    ],
    "alpha": 0.05,
}

UNBALANCED_PLATE = {
    "groups": [
        {"label": "reference buffer", "values": [41.2, 43.8, 42.5, 40.9, 44.1, 42.0]},
        {"label": "phosphate pH 7.0", "values": [44.9, 46.3, 45.1]},
        {"label": "HEPES pH 7.5", "values": [48.7, 50.2, 49.5, 47.9, 51.0]},
        {"label": "Tris pH 8.0", "values": [43.1, 42.2, 44.6, 41.8]},
        {"label": "citrate pH 6.0", "values": [38.4, 39.9, 37.6, 40.2, 38.8, 39.1]},
    ],
    "alpha": 0.05,
}


def with_fields(base: dict, **fields: object) -> dict:
    return {**base, **fields}


PLANNED_CONTRASTS = [
    {"name": "reference vs the other buffers",
     "coefficients": {"reference buffer": 4, "phosphate pH 7.0": -1, "HEPES pH 7.5": -1,
                      "Tris pH 8.0": -1, "citrate pH 6.0": -1}},
    {"name": "HEPES vs phosphate", "coefficients": {"HEPES pH 7.5": 1, "phosphate pH 7.0": -1}},
]


#: A complete planned set for the buffer plate (k - 1 = 4 contrasts): the
#: reference buffer against the four new formulations, near-neutral pH
#: (phosphate 7.0, HEPES 7.5) against the pH extremes (Tris 8.0, citrate 6.0),
#: and one comparison within each of those pairs. Orthogonal with six wells per
#: buffer; not with the wells lost on the unbalanced plate.
BUFFER_CONTRAST_SET = [
    {"name": "reference vs new formulations",
     "coefficients": {"reference buffer": 4, "phosphate pH 7.0": -1, "HEPES pH 7.5": -1,
                      "Tris pH 8.0": -1, "citrate pH 6.0": -1}},
    {"name": "near-neutral vs extreme pH",
     "coefficients": {"phosphate pH 7.0": 1, "HEPES pH 7.5": 1, "Tris pH 8.0": -1, "citrate pH 6.0": -1}},
    {"name": "phosphate vs HEPES", "coefficients": {"phosphate pH 7.0": 1, "HEPES pH 7.5": -1}},
    {"name": "Tris vs citrate", "coefficients": {"Tris pH 8.0": 1, "citrate pH 6.0": -1}},
]

CONTRASTS_BALANCED = {"groups": BUFFER_PLATE["groups"], "contrasts": BUFFER_CONTRAST_SET, "alpha": 0.05}

CONTRASTS_UNBALANCED = {"groups": UNBALANCED_PLATE["groups"], "contrasts": BUFFER_CONTRAST_SET, "alpha": 0.05}

#: Only the group sizes of the unbalanced plate, and a Helmert set weighted by them.
CONTRASTS_HELMERT_SIZES = {
    "sizes": {g["label"]: len(g["values"]) for g in UNBALANCED_PLATE["groups"]},
    "standard": {"kind": "helmert"},
}

#: The figures: the buffer plate's means with the Tukey-Kramer letters, its
#: pairwise differences, and the unbalanced plate's one-sided comparisons with
#: the reference buffer (is any new formulation more active?).
FIGURE_MEANS = {**BUFFER_PLATE, "value_label": "specific activity (U/mg)",
                "title": "Buffer plate: specific activity by formulation",
                "interval": "group", "letters_method": "tukey_kramer"}

FIGURE_DIFFERENCES_PAIRWISE = {**BUFFER_PLATE, "family": "pairwise", "method": "tukey_kramer",
                               "value_label": "specific activity (U/mg)",
                               "title": "Buffer plate: every pair of formulations"}

FIGURE_DIFFERENCES_CONTROL = {**UNBALANCED_PLATE, "family": "control", "control": "reference buffer",
                              "method": "dunnett", "alternative": "greater",
                              "value_label": "specific activity (U/mg)",
                              "title": "Unbalanced plate: which formulations beat the reference buffer"}

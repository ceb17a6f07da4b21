"""Pictures of a one-way analysis: result objects in, SVG or PNG bytes out.

* :func:`means_figure` — each group's mean with its confidence interval, the
  replicate values under it, and the compact letters in a column on the right;
* :func:`differences_figure` — the intervals of a follow-up family's rows
  (differences of means, or contrast estimates) against a line at zero.

Both use one layout: one row per group or comparison, its label on the left
(wrapped, never cut mid-word unless a word is longer than a line), the value
axis along the bottom with the label given in the request, a narrow text
column on the right (letters, or adjusted p-values), and a key under the plot
saying what each mark means and the level of the intervals. Nothing relies on
colour: decisions are told apart by filled against open markers and solid
against dashed lines, alternate rows are banded in light grey, and an
interval with no bound on one side (one-sided alternatives) runs to the edge
of the plot and ends in an open arrowhead instead of a cap.

Every interval mark is one SVG group with an id, ``interval-<row>`` (rows
counted from 0 in the order of the result), so that tests and notebooks can
find them; the estimates are ``mean-<row>`` or ``estimate-<row>``, the letters
``letters-<row>``, the p-values ``p-<row>``, the replicate values
``values-<row>`` and the plotting area ``plot-area``.

Determinism: the same inputs give the same bytes. The drawing starts from
matplotlib's default style plus :data:`STYLE` (a fixed SVG hash salt, text
kept as text in SVG, no math parsing of labels), and the files carry no date
and no software version (only what the caller passes as ``description``).

matplotlib is used through its object-oriented API only (``Figure`` with the
Agg canvas, never pyplot). Its rcParams are process-global, so the drawing
holds a module lock while a style is in force.

The one computation here is the pooled-variance interval of a group mean
(:func:`pooled_summaries`); everything else is drawn from the results as given.
"""

from __future__ import annotations

import io
import math
import textwrap
import threading
import unicodedata
import warnings
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace

import matplotlib.style
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.legend_handler import HandlerBase
from matplotlib.lines import Line2D
from matplotlib.patches import FancyArrowPatch
from scipy import stats

from familywise.stats.data import GroupSummary, OneWayData
from familywise.stats.families import FamilyResult

MEDIA_TYPES = {"svg": "image/svg+xml", "png": "image/png"}

#: Most rows (groups or comparisons) one figure draws; more would not be legible.
MAX_ROWS = 60
#: Most replicate values drawn as points in a means figure (beyond, they are left out and the key says so).
MAX_DRAWN_VALUES = 2000
#: Characters per line of a row label, and lines per label (the last line ends in "…" if cut).
LABEL_WIDTH = 34
LABEL_LINES = 5

WIDTH_INCHES = 7.0
PNG_DPI = 150
ROW_INCHES = 0.36
LINE_INCHES = 0.15

#: Style on top of matplotlib's defaults (see the module docstring).
STYLE = {
    "svg.hashsalt": "familywise",
    "svg.fonttype": "none",
    "text.parse_math": False,
    "axes.formatter.use_mathtext": False,
    "axes.unicode_minus": True,
    "font.family": "sans-serif",
    "font.size": 9.0,
    "axes.linewidth": 0.8,
    "axes.edgecolor": "#4a4a4a",
    "xtick.color": "#4a4a4a",
    "xtick.labelcolor": "#1a1a1a",
    "xtick.labelsize": 8.5,
    "ytick.labelsize": 8.5,
    "legend.fontsize": 8.0,
    "legend.title_fontsize": 8.5,
}

# Palette: near-black ink for what matters, mid greys for what does not; the
# lightness steps alone carry the meaning when printed in greyscale.
INK = "#1c2a3a"
MUTED = "#6e6e6e"
DOTS = "#8f8f8f"
BAND = "#f1f1f1"
GRID = "#d6d6d6"
ZERO = "#333333"

METHOD_NAMES = {
    "tukey_kramer": "Tukey-Kramer", "lsd": "Fisher's LSD", "bonferroni": "Bonferroni", "sidak": "Šidák",
    "holm": "Holm", "games_howell": "Games-Howell", "benjamini_hochberg": "Benjamini-Hochberg",
    "dunn": "Dunn", "dunnett": "Dunnett", "dunnett_stepdown": "Dunnett step-down",
    "hsu_mcb": "Hsu's MCB", "none": "unadjusted t", "multivariate_t": "multivariate t",
    "scheffe": "Scheffé",
}
RATE_NAMES = {"familywise": "familywise", "per_comparison": "per-comparison",
              "false_discovery": "false-discovery"}

_LOCK = threading.Lock()


class NoIntervals(ValueError):
    """The family's rows carry decisions only (a stepwise method): there is nothing to draw."""


@dataclass(frozen=True)
class FigureText:
    """What the request says about the picture."""

    value_label: str = "value"
    title: str | None = None
    #: Stored in the file's metadata (not drawn): provenance, for example.
    description: str | None = None


# --------------------------------------------------------------------------
# the one computation
# --------------------------------------------------------------------------


def pooled_summaries(data: OneWayData, summaries: Sequence[GroupSummary],
                     alpha: float) -> tuple[GroupSummary, ...]:
    """The group summaries with pooled-variance t intervals of the means.

    mean_i ± t(1 - alpha/2; N - k) · s_p / sqrt(n_i), with s_p² the
    within-group mean square: the interval for a treatment mean of the
    one-way model (Montgomery, Design and Analysis of Experiments, section
    3.3, "estimation of the model parameters"; section from memory). Every
    group gets one, a group of one value included, as long as the design has
    error degrees of freedom and a non-zero pooled variance.
    """
    data.require_pooled_variance()
    s = math.sqrt(data.pooled_variance)
    factor = float(stats.t.isf(alpha / 2.0, data.df_within)) * s
    out = []
    for summary in summaries:
        se = s / math.sqrt(summary.n)
        half = factor / math.sqrt(summary.n)
        out.append(replace(summary, se=se, ci_low=summary.mean - half, ci_high=summary.mean + half))
    return tuple(out)


# --------------------------------------------------------------------------
# the figures
# --------------------------------------------------------------------------


def means_figure(
    summaries: Sequence[GroupSummary],
    *,
    alpha: float,
    interval: str,
    text: FigureText,
    fmt: str = "svg",
    values: Sequence[Sequence[float]] | None = None,
    letters: FamilyResult | None = None,
    error_df: int | None = None,
) -> bytes:
    """Group means with their intervals, replicate values and compact letters.

    ``summaries`` come from :func:`familywise.stats.data.summarise` (``interval``
    "group") or :func:`pooled_summaries` ("pooled", with ``error_df`` = N - k);
    ``letters`` is a pairwise result whose ``letters`` are printed on the
    right; ``values`` are the replicates, drawn when there are at most
    :data:`MAX_DRAWN_VALUES` of them.
    """
    _check(fmt, len(summaries))
    if interval not in ("group", "pooled") or (interval == "pooled" and error_df is None):
        raise ValueError(f"interval {interval!r} (pooled intervals need error_df)")
    drawn = values is not None and sum(len(v) for v in values) <= MAX_DRAWN_VALUES
    labels = [[*_wrap(s.label), f"n = {s.n}"] for s in summaries]
    with _LOCK, matplotlib.style.context(["default", STYLE]):
        fig, ax, centres = _frame(labels, text, legend_lines=5 if letters is not None else 4)
        ends = [x for s in summaries for x in (s.mean, s.ci_low, s.ci_high) if x is not None]
        if drawn:
            ends += [float(v) for group in values for v in group]
        low, high = _limits(ends, pad=0.05)
        ax.set_xlim(low, high)
        ax.set_xlabel(_clean(text.value_label), parse_math=False)
        width = high - low
        for row, (summary, y) in enumerate(zip(summaries, centres, strict=True)):
            line_y = y - 0.1
            if summary.ci_low is not None and summary.ci_high is not None:
                ax.add_patch(_interval(summary.ci_low, summary.ci_high, line_y, width, _SOLID,
                                       gid=f"interval-{row}"))
                if not summary.ci_high > summary.ci_low:
                    _aside(ax, "no spread: SD = 0", summary.mean, line_y)
            else:
                _aside(ax, "no interval (n = 1)", summary.mean, line_y, gid=f"interval-{row}")
            ax.add_line(Line2D([summary.mean], [line_y], marker="o", markersize=6.5, markerfacecolor=INK,
                               markeredgecolor="white", markeredgewidth=0.8, linestyle="none",
                               zorder=5, gid=f"mean-{row}"))
            if drawn:
                ordered = sorted(float(v) for v in values[row])
                offsets = [(0.0, -0.07, 0.07)[i % 3] for i in range(len(ordered))]
                ax.add_line(Line2D(ordered, [y + 0.2 + o for o in offsets], linestyle="none", marker="o",
                                   markersize=3.6, markerfacecolor="none", markeredgecolor=DOTS,
                                   markeredgewidth=0.8, zorder=3, gid=f"values-{row}"))
        if letters is not None and letters.letters is not None:
            _letter_column(ax, [s.label for s in summaries], letters.letters, centres)
        level = _level(alpha)
        if interval == "group":
            meaning = f"{level} t interval of the mean, from the group's own SD"
        else:
            meaning = f"{level} t interval of the mean, from the pooled SD ({error_df} df)"
        keys: list[tuple[object, str]] = [
            (Line2D([], [], marker="o", markersize=6.5, markerfacecolor=INK, markeredgecolor="white",
                    linestyle="none"), "mean"),
            (_Key(_SOLID), meaning),
        ]
        if drawn:
            keys.append((Line2D([], [], marker="o", markersize=3.6, markerfacecolor="none",
                                markeredgecolor=DOTS, linestyle="none"), "replicate value"))
        elif values is not None:
            keys.append((_TextKey("·"), f"replicate values not drawn (more than {MAX_DRAWN_VALUES})"))
        if letters is not None:
            method = METHOD_NAMES.get(letters.method, letters.method)
            keys.append((_TextKey("ab"), f"groups sharing a letter do not differ significantly "
                                         f"({method}, {RATE_NAMES[letters.error_rate]} α = {alpha:g})"))
        title = "Each mean on its own: an interval is not a comparison" + (
            "; the letters compare the groups" if letters is not None else "")
        _key(fig, keys, title)
        return _render(fig, fmt, text)


def differences_figure(result: FamilyResult, *, text: FigureText, fmt: str = "svg") -> bytes:
    """The intervals of a family's rows against zero, decisions marked.

    Raises :class:`NoIntervals` when the family has no intervals (stepwise
    methods, Dunn's rank test).
    """
    rows = result.comparisons
    _check(fmt, len(rows))
    if result.interval == "none" or any(r.ci_low is None and r.ci_high is None for r in rows):
        raise NoIntervals(f"{result.method} gives decisions, not intervals")
    best = result.family == "best"
    labels = [_wrap(r.name) if r.name is not None else _wrap_difference(r.first, r.second) for r in rows]
    open_ended = any(r.ci_low is None or r.ci_high is None for r in rows)
    with _LOCK, matplotlib.style.context(["default", STYLE]):
        fig, ax, centres = _frame(labels, text, legend_lines=5 if open_ended else 4)
        ends = [0.0] + [x for r in rows for x in (r.difference, r.ci_low, r.ci_high) if x is not None]
        low, high = _limits(ends, pad=0.06)
        span = high - low
        if any(r.ci_low is None for r in rows):
            low -= 0.15 * span
        if any(r.ci_high is None for r in rows):
            high += 0.15 * span
        ax.set_xlim(low, high)
        value = _clean(text.value_label)
        ax.set_xlabel(f"contrast estimate, {value}" if result.family == "contrasts" else f"difference in {value}",
                      parse_math=False)
        ax.axvline(0.0, color=ZERO, linewidth=0.9, zorder=2, gid="zero-line")
        for row, (r, y) in enumerate(zip(rows, centres, strict=True)):
            look = _SOLID if r.significant else _DASHED
            if r.ci_low is not None and r.ci_high is not None:
                mark = _interval(r.ci_low, r.ci_high, y, high - low, look, gid=f"interval-{row}")
            elif r.ci_high is None:
                mark = _open_interval(r.ci_low, high, y, look, gid=f"interval-{row}")
            else:
                mark = _open_interval(r.ci_high, low, y, look, gid=f"interval-{row}")
            ax.add_patch(mark)
            ax.add_line(Line2D([r.difference], [y], marker="o", markersize=6.0, linestyle="none",
                               markerfacecolor=look.face, markeredgecolor=look.colour,
                               markeredgewidth=1.2, zorder=5, gid=f"estimate-{row}"))
        adjusted = result.error_rate != "per_comparison"
        _p_column(ax, [r.p_value for r in rows], centres, "adjusted p" if adjusted else "p")
        rate = f"{RATE_NAMES[result.error_rate]} α = {result.alpha:g}"
        if best:
            yes, no, zero = (f"excluded from the best ({rate})", "may be the best",
                             "0: level with the best of the others")
        else:
            yes, no = f"significant ({rate})", "not significant"
            zero = "0: contrast equal to zero" if result.family == "contrasts" else "0: no difference"
        keys: list[tuple[object, str]] = [(_Key(_SOLID), yes), (_Key(_DASHED), no)]
        if open_ended:
            keys.append((_Key(_SOLID, open_end=True), "arrow: one-sided, no bound on this side"))
        keys.append((Line2D([], [], color=ZERO, linewidth=0.9), zero))
        _key(fig, keys, _interval_title(result))
        return _render(fig, fmt, text)


# --------------------------------------------------------------------------
# drawing parts
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class _Look:
    colour: str
    width: float
    style: object
    face: str


_SOLID = _Look(INK, 1.9, "solid", INK)
_DASHED = _Look(MUTED, 1.4, (0, (6.0, 2.0)), "white")
# Caps 7.2 pt tall: shorter than one dash of the dashed look (6 x 1.4 pt), so caps never break.
_CAP = "|-|,widthA=0.3,widthB=0.3"
_ARROW = "]->,widthA=0.3,lengthA=0"


def _interval(low: float, high: float, y: float, span: float, look: _Look, gid: str) -> FancyArrowPatch:
    """A capped bar from low to high (a zero-width interval still shows its caps)."""
    if not high - low > span * 1e-9:
        high = low + span * 1e-9
    return FancyArrowPatch((low, y), (high, y), arrowstyle=_CAP, **_patch_style(look), gid=gid)


def _open_interval(bound: float, edge: float, y: float, look: _Look, gid: str) -> FancyArrowPatch:
    """A cap at the finite bound and a line to the plot's edge ending in an open arrowhead."""
    return FancyArrowPatch((bound, y), (edge, y), arrowstyle=_ARROW, clip_on=False,
                           **_patch_style(look), gid=gid)


def _patch_style(look: _Look) -> dict:
    return {"mutation_scale": 12.0, "shrinkA": 0.0, "shrinkB": 0.0, "color": look.colour,
            "linewidth": look.width, "linestyle": look.style, "zorder": 4, "capstyle": "butt",
            "joinstyle": "miter"}


class _Key:
    """A key entry drawing an interval mark (legend proxy)."""

    def __init__(self, look: _Look, open_end: bool = False) -> None:
        self.look = look
        self.open_end = open_end


class _TextKey:
    """A key entry drawing a few characters (legend proxy)."""

    def __init__(self, text: str) -> None:
        self.text = text


class _KeyHandler(HandlerBase):
    def create_artists(self, legend, orig_handle, xdescent, ydescent, width, height, fontsize, trans):
        y = height / 2.0 - ydescent
        x0, x1 = -xdescent, -xdescent + width
        if isinstance(orig_handle, _TextKey):
            from matplotlib.text import Text

            return [Text(x0 + width / 2.0, y, orig_handle.text, ha="center", va="center",
                         fontsize=fontsize, color=INK, fontweight="bold", transform=trans)]
        look = orig_handle.look
        style = _ARROW if orig_handle.open_end else _CAP
        bar = FancyArrowPatch((x0, y), (x1, y), arrowstyle=style, transform=trans,
                              **{**_patch_style(look), "mutation_scale": 10.0})
        artists = [bar]
        if not orig_handle.open_end:
            artists.append(Line2D([x0 + width / 2.0], [y], marker="o", markersize=5.5, linestyle="none",
                                  markerfacecolor=look.face, markeredgecolor=look.colour,
                                  markeredgewidth=1.1, transform=trans))
        return artists


_HANDLERS = {_Key: _KeyHandler(), _TextKey: _KeyHandler()}


def _frame(labels: list[list[str]], text: FigureText, legend_lines: int) -> tuple[Figure, object, list[float]]:
    """The figure, its one axes with banded rows and row labels, and each row's centre.

    Rows run down the page in the order given; a row is one unit tall, more
    when its label wraps to several lines.
    """
    heights = [max(1.0, (len(lines) * LINE_INCHES + 0.14) / ROW_INCHES) for lines in labels]
    centres, top = [], 0.0
    for h in heights:
        centres.append(top + h / 2.0)
        top += h
    height = top * ROW_INCHES + 0.95 + 0.19 * legend_lines + (0.35 if text.title else 0.0)
    fig = Figure(figsize=(WIDTH_INCHES, height), dpi=PNG_DPI, layout="constrained")
    FigureCanvasAgg(fig)
    fig.get_layout_engine().set(h_pad=0.06, w_pad=0.08)
    ax = fig.add_subplot()
    ax.patch.set_gid("plot-area")
    ax.set_ylim(top, 0.0)
    ax.set_yticks(centres, labels=["\n".join(lines) for lines in labels])
    ax.tick_params(axis="y", length=0, pad=6)
    ax.tick_params(axis="x", direction="out", length=3.5)
    for side in ("top", "right", "left"):
        ax.spines[side].set_visible(False)
    ax.grid(axis="x", color=GRID, linewidth=0.6, linestyle=(0, (1.0, 2.0)))
    ax.set_axisbelow(True)
    start = 0.0
    for row, h in enumerate(heights):
        if row % 2 == 1:
            ax.axhspan(start, start + h, color=BAND, linewidth=0, zorder=0)
        start += h
    if text.title:
        fig.suptitle(_clean(text.title), x=0.02, ha="left", fontsize=11.0, parse_math=False)
    return fig, ax, centres


def _aside(ax, note: str, x: float, y: float, gid: str | None = None) -> None:
    """A short italic note just right of a point."""
    ax.annotate(note, (x, y), xytext=(8, 0), textcoords="offset points", va="center", fontsize=7.5,
                color=MUTED, fontstyle="italic", gid=gid)


def _letter_column(ax, labels: Sequence[str], letters: Mapping[str, str], centres: Sequence[float]) -> None:
    """Letters on the right, each letter in its own column (figure spaces hold the gaps)."""
    used = sorted({ch for text in letters.values() for ch in text}, key=_letter_order)
    _column_header(ax, "letters")
    for row, (label, y) in enumerate(zip(labels, centres, strict=True)):
        held = set(letters.get(label, ""))
        aligned = "".join(ch if ch in held else "\u2007" for ch in used).rstrip("\u2007")
        ax.text(1.02, y - 0.1, aligned, transform=ax.get_yaxis_transform(), va="center", ha="left",
                family="monospace", fontsize=9.0, color=INK, clip_on=False, gid=f"letters-{row}")


def _letter_order(ch: str) -> tuple[int, str]:
    return (0 if ch.islower() else 1, ch.lower())


def _p_column(ax, p_values: Sequence[float], centres: Sequence[float], header: str) -> None:
    _column_header(ax, header)
    for row, (p, y) in enumerate(zip(p_values, centres, strict=True)):
        shown = "< 0.001" if p < 1e-3 else f"{p:.3g}"
        ax.text(1.02, y, shown, transform=ax.get_yaxis_transform(), va="center", ha="left",
                fontsize=8.0, color=INK, clip_on=False, gid=f"p-{row}")


def _column_header(ax, header: str) -> None:
    ax.text(1.02, 1.0, header, transform=ax.transAxes, va="bottom", ha="left", fontsize=7.5,
            fontstyle="italic", color=MUTED, clip_on=False)


def _key(fig: Figure, keys: list[tuple[object, str]], title: str) -> None:
    handles = [h for h, _ in keys]
    legend = fig.legend(handles, [_clean(label) for _, label in keys], loc="outside lower left",
                        handler_map=_HANDLERS, frameon=False, title=_clean(title), alignment="left",
                        handlelength=3.4, borderaxespad=0.2)
    legend.set_gid("key")


def _interval_title(result: FamilyResult) -> str:
    level = _level(result.alpha)
    method = METHOD_NAMES.get(result.method, result.method)
    if result.method == "lsd" and any("Protected LSD" in note for note in result.notes):
        method = "Fisher's protected LSD"
    if result.family == "best":
        kind = "simultaneous constrained intervals of each mean minus the best of the others"
    elif result.interval == "per_comparison":
        kind = "per-comparison intervals, not adjusted for multiplicity"
    elif result.alternative in ("greater", "less"):
        kind = "simultaneous one-sided intervals"
    else:
        kind = "simultaneous intervals"
    return f"{level} {kind} ({method})"


def _level(alpha: float) -> str:
    return f"{100.0 * (1.0 - alpha):.10g}%"


def _limits(values: Sequence[float], pad: float) -> tuple[float, float]:
    low, high = min(values), max(values)
    span = high - low
    if not span > 1e-12 * max(abs(low), abs(high)):
        span = abs(high) * 0.1 or 1.0
        low, high = low - span / 2.0, high + span / 2.0
    return low - pad * span, high + pad * span


def _check(fmt: str, rows: int) -> None:
    if fmt not in MEDIA_TYPES:
        raise ValueError(f"unknown figure format {fmt!r}")
    if not 0 < rows <= MAX_ROWS:
        raise ValueError(f"a figure draws 1 to {MAX_ROWS} rows, not {rows}")


def _clean(text: str) -> str:
    """The text with characters XML cannot carry (controls, surrogates, non-characters) replaced,
    line breaks and tabs turned into spaces."""
    out = []
    for ch in text:
        if ch in "\t\n\r\v\f":
            out.append(" ")
        elif unicodedata.category(ch) in ("Cc", "Cs", "Cn"):
            out.append("\ufffd")
        else:
            out.append(ch)
    return "".join(out)


def _wrap(label: str, max_lines: int = LABEL_LINES) -> list[str]:
    lines = textwrap.wrap(_clean(label), LABEL_WIDTH, break_on_hyphens=True) or [""]
    if len(lines) > max_lines:
        lines = lines[:max_lines]
        lines[-1] = lines[-1][: LABEL_WIDTH - 1].rstrip() + "…"
    return lines


def _wrap_difference(first: str, second: str) -> list[str]:
    """"first − second" on one line if it fits, else each side wrapped on its own lines."""
    whole = _wrap(f"{first} − {second}")
    if len(whole) == 1:
        return whole
    half = (LABEL_LINES + 1) // 2
    return _wrap(first, half) + _wrap(f"− {second}", half)


def _render(fig: Figure, fmt: str, text: FigureText) -> bytes:
    meta: dict[str, str | None] = {key: _clean(value) for key, value in
                                   (("Title", text.title), ("Description", text.description)) if value}
    # no date, and no library name or version: the same request gives the same bytes
    meta.update({"Date": None, "Creator": None} if fmt == "svg" else {"Software": None})
    buffer = io.BytesIO()
    with warnings.catch_warnings():
        # Characters the bundled font lacks: PNG shows a box, SVG keeps the text for the viewer's fonts.
        warnings.filterwarnings("ignore", message=r"Glyph \d+ .*missing from font", category=UserWarning)
        fig.savefig(buffer, format=fmt, dpi=PNG_DPI, metadata=meta)
    return buffer.getvalue()


def warm_up() -> None:
    """Import the drawing stack and draw one small figure in each format, so
    that the first real figure does not pay for loading matplotlib's fonts."""
    from familywise.stats.data import OneWayData, summarise

    data = OneWayData.from_arrays(["a", "b"], [[1.0, 2.0, 3.0], [2.0, 3.0, 4.5]])
    for fmt in MEDIA_TYPES:
        means_figure(summarise(data), alpha=0.05, interval="group", text=FigureText(), fmt=fmt)

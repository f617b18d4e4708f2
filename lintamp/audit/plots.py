"""Pictures for the Markdown and HTML sheets: |Z(f)| per port, |gain(f)| per path.

matplotlib is optional (``pip install 'lintamp[plots]'``) and imported only here,
only when a sheet with pictures is asked for.  Output is deterministic: the Agg
backend, a fixed size and dpi, fixed fonts, and PNG metadata pinned so the same
input gives the same bytes.
"""

from __future__ import annotations

import hashlib
import io
import re
from dataclasses import dataclass, field

import numpy as np

from lintamp.report.si import si

DPI = 96
SIZE_IN = (6.4, 3.2)
PNG_METADATA = {"Software": "lintamp audit", "Title": None, "Author": None, "Description": None,
                "Creation Time": None, "Copyright": None, "Disclaimer": None, "Warning": None,
                "Source": None, "Comment": None}


@dataclass
class Plots:
    made: bool
    reason: str
    images: dict[str, bytes] = field(default_factory=dict)  # curve key -> PNG bytes


_SAFE_NAME = re.compile(r"[A-Za-z0-9_-]{1,80}")


def plot_file_name(stem: str, key: str) -> str:
    """The file name of a curve's picture beside the sheet: ``STEM-KEY.png``.

    Keys hold net names, which the netlist chooses: a name with ``/``, ``..``, a
    leading dot or anything but letters, digits, ``_`` and ``-`` (or over 80 of
    them) is replaced by those letters and a hash of the key, so the file is always
    one plain name in the sheet's folder and two keys never share one.
    """
    if _SAFE_NAME.fullmatch(key):
        return f"{stem}-{key}.png"
    slug = re.sub(r"[^A-Za-z0-9_-]+", "_", key)[:60]
    digest = hashlib.sha256(key.encode("utf-8", "surrogateescape")).hexdigest()[:12]
    return f"{stem}-{slug}-{digest}.png"


def _pyplot():
    try:
        import matplotlib
    except ImportError:
        return None
    matplotlib.use("Agg", force=True)
    import matplotlib.pyplot as plt
    return plt


def render_plots(curves) -> Plots:
    """One PNG per curve, or ``made=False`` with the reason (matplotlib absent)."""
    plt = _pyplot()
    if plt is None:
        return Plots(False, "matplotlib is not installed (pip install 'lintamp[plots]'); plots skipped")
    if not curves:
        return Plots(True, "nothing to plot")
    images = {}
    style = {"font.family": "DejaVu Sans", "font.size": 9, "svg.hashsalt": "lintamp",
             "path.simplify": False}
    with plt.rc_context(style):
        for curve in curves:
            images[curve.key] = _one(plt, curve)
    return Plots(True, "", images)


def _one(plt, curve) -> bytes:
    mags = np.abs(curve.values)
    fig, ax = plt.subplots(figsize=SIZE_IN, dpi=DPI)
    try:
        finite = np.isfinite(mags) & (mags > 0)
        ax.loglog(curve.freqs_hz[finite], mags[finite], color="#1f4e99", linewidth=1.6)
        ax.set_xlabel("frequency (Hz)")
        unit = {"ohm": "Ω"}.get(curve.unit, curve.unit)
        ax.set_ylabel(f"|{'Z' if curve.quantity == 'impedance' else 'gain'}| ({unit})")
        ax.set_title(curve.title)
        ax.grid(True, which="both", color="#dddddd", linewidth=0.5)
        lo, hi = curve.freqs_hz[0], curve.freqs_hz[-1]
        for k, f in enumerate(p for p in curve.poles_hz if lo <= p <= hi):
            ax.axvline(f, color="#b03030", linestyle="--", linewidth=0.9,
                       label="pole" if k == 0 else None)
            ax.annotate(si(f, "Hz"), xy=(f, 1.0), xycoords=("data", "axes fraction"), xytext=(3, -12),
                        textcoords="offset points", fontsize=8, color="#b03030")
        if curve.f3db_hz and lo <= curve.f3db_hz <= hi:
            ax.axvline(curve.f3db_hz, color="#2a8a2a", linestyle=":", linewidth=1.2, label="-3 dB")
        if curve.band_hz and lo <= curve.band_hz <= hi:
            ax.axvspan(lo, curve.band_hz, color="#1f4e99", alpha=0.06, label="signal band")
        if ax.get_legend_handles_labels()[0]:
            ax.legend(loc="best", fontsize=8, frameon=False)
        fig.tight_layout()
        buf = io.BytesIO()
        fig.savefig(buf, format="png", dpi=DPI, metadata=PNG_METADATA)
        return buf.getvalue()
    finally:
        plt.close(fig)



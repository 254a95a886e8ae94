"""Plot a probed column: temperature against depth with solidus curves and melting interval."""

from __future__ import annotations

import math
import os
from pathlib import Path

import numpy as np

__all__ = ["column_plot_png"]


def column_plot_png(path, probe, title: str, footnote: str = "") -> Path:
    """Write a two-panel PNG of a :class:`~geomelt.pipeline.column.ColumnProbe`.

    Left: geotherm, mantle adiabat, the melting path of upwelling mantle, the dry
    and wet peridotite solidus, the wet granite solidus in the crust, the Moho and
    the lithosphere base, with the decompression melting interval shaded. Right:
    melt fraction with depth. Written to a temporary name and moved into place.
    """
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    path = Path(path)
    z = probe.depth_km
    r = probe.results
    fig, (ax, axf) = plt.subplots(
        1, 2, figsize=(9.5, 7.0), gridspec_kw={"width_ratios": [3, 1]}, sharey=True
    )
    ax.plot(probe.geotherm_c, z, color="black", lw=2.0, label="geotherm")
    ax.plot(probe.adiabat_c, z, color="0.5", lw=1.0, ls="--", label="mantle adiabat")
    ax.plot(probe.dry_solidus_c, z, color="#8c510a", lw=1.5, label="dry peridotite solidus")
    ax.plot(
        probe.wet_solidus_c, z, color="#2166ac", lw=1.5, ls="-.", label="wet peridotite solidus"
    )
    ax.plot(
        probe.granite_solidus_c, z, color="#1b7837", lw=1.5, ls=":", label="wet granite solidus"
    )
    if np.isfinite(probe.melting_path_c).any():
        ax.plot(probe.melting_path_c, z, color="#b2182b", lw=2.0, label="upwelling mantle path")
    sol = r.get("solidus_depth_km", float("nan"))
    lab = r.get("lab_depth_km", float("nan"))
    if r.get("melt_thickness_km", 0.0) > 0 and math.isfinite(sol) and math.isfinite(lab):
        ax.axhspan(lab, sol, color="#f4a582", alpha=0.35, label="decompression melting")
        axf.axhspan(lab, sol, color="#f4a582", alpha=0.35)
    crust = probe.inputs["crustal_thickness_km"]
    for depth, name, colour in ((crust, "Moho", "#35978f"), (lab, "lithosphere base", "#762a83")):
        if math.isfinite(depth):
            ax.axhline(depth, color=colour, lw=1.0)
            ax.text(
                1880, depth - 1.5, f"{name} {depth:.0f} km", color=colour, fontsize=8, ha="right"
            )
    slab = probe.inputs.get("slab_depth_km", float("nan"))
    if math.isfinite(slab):
        ax.axhline(slab, color="0.3", lw=1.0, ls=(0, (1, 2)))
        ax.text(1880, slab - 1.5, f"slab top {slab:.0f} km", color="0.3", fontsize=8, ha="right")
    ax.set_xlim(0, 1900)
    ax.set_ylim(z[-1], 0)
    ax.set_xlabel("temperature (°C)")
    ax.set_ylabel("depth (km)")
    ax.set_title(title, fontsize=10)
    ax.grid(alpha=0.3)
    ax.legend(loc="lower left", fontsize=8)
    axf.plot(probe.melt_fraction, z, color="#b2182b", lw=2.0)
    axf.set_xlim(0, max(0.05, float(np.nanmax(probe.melt_fraction)) * 1.2))
    axf.set_xlabel("melt fraction")
    axf.grid(alpha=0.3)
    h = r.get("melt_thickness_km", float("nan"))
    axf.set_title(f"melt column {h:.2f} km" if math.isfinite(h) else "", fontsize=10)
    if footnote:
        fig.text(0.01, 0.005, footnote, fontsize=6, wrap=True, color="0.3")
    fig.tight_layout(rect=(0, 0.04, 1, 1))
    tmp = path.with_name(f".{path.name}.partial.png")
    fig.savefig(tmp, dpi=110)
    plt.close(fig)
    os.replace(tmp, path)
    return path

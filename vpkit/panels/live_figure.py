"""A persistent figure for the run explorer, updated in place.

The artists (points, error bars, fit line, band, reference, residuals) are
created once; :meth:`LiveFigure.update` changes their data and redraws. Axis
limits stay fixed while points are toggled (they only grow when data would
leave them), so a toggle never re-lays out the tick labels. Points are
pickable: a click on a point calls ``on_pick(index)``.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
from matplotlib.collections import LineCollection
from matplotlib.figure import Figure

from .. import display as D
from ..constants import T_ZERO_C
from ..output.figures import enthalpy_title

MM_PER_INCH = 25.4


class LiveFigure:
    """ln p vs 1000/T with fit, band, reference and residual panel, updated in place."""

    def __init__(self, width_mm: float = 160.0, height_mm: float = 110.0,
                 on_pick: Callable[[int], None] | None = None, canvas: str = "agg",
                 blit: bool | None = None) -> None:
        self.fig = Figure(figsize=(width_mm / MM_PER_INCH, height_mm / MM_PER_INCH), dpi=100)
        self._png_canvas = None  # the static fallback's printing canvas, made on first use
        self.kind = self._attach_canvas(canvas)
        gs = self.fig.add_gridspec(2, 1, height_ratios=[3, 1], hspace=0.08, left=0.12,
                                   right=0.97, top=0.83, bottom=0.12)
        self.ax = self.fig.add_subplot(gs[0])
        self.axr = self.fig.add_subplot(gs[1], sharex=self.ax)
        ax, axr = self.ax, self.axr
        self.band = ax.fill_between([0, 1], [0, 0], [0, 0], color="0.85", lw=0)
        (self.fit_line,) = ax.plot([], [], color="k", lw=1.2)
        (self.ref_line,) = ax.plot([], [], color="tab:blue", lw=1.0, ls="--")
        self.err = LineCollection([], colors="tab:red", linewidths=1.0)
        ax.add_collection(self.err)
        (self.pts_in,) = ax.plot([], [], "o", color="tab:red", ms=6, picker=True, pickradius=6)
        (self.pts_out,) = ax.plot([], [], "s", mfc="none", mec="0.35", mew=1.2, ms=6,
                                  picker=True, pickradius=6)
        axr.axhline(0.0, color="k", lw=0.8)
        self.rerr = LineCollection([], colors="tab:red", linewidths=1.0)
        axr.add_collection(self.rerr)
        (self.res_in,) = axr.plot([], [], "o", color="tab:red", ms=5, picker=True, pickradius=6)
        (self.res_out,) = axr.plot([], [], "s", mfc="none", mec="0.35", mew=1.2, ms=5,
                                   picker=True, pickradius=6)
        self.title = self.fig.text(0.12, 0.975, "", fontsize=10, va="top", ha="left",
                                   parse_math=False)
        self.legend = ax.legend([self.fit_line, self.ref_line, self.pts_in, self.pts_out],
                                ["fit ± 95 % band", "reference", "included",
                                 "excluded (click to toggle)"],
                                loc="lower left", fontsize=8, frameon=False, numpoints=1)
        ax.set_ylabel(r"$\ln(p_\mathrm{vap}/\mathrm{Pa})$")
        axr.set_ylabel(r"$\Delta \ln p$")
        axr.set_xlabel(r"$1000\,\mathrm{K}/T$")
        ax.tick_params(labelbottom=False)
        top = ax.secondary_xaxis("top", functions=(lambda v: 1000.0 / np.asarray(v) - T_ZERO_C,
                                                   lambda t: 1000.0 / (np.asarray(t) + T_ZERO_C)))
        top.set_xlabel("t / °C", fontsize=9)
        self._idx_in = np.array([], int)
        self._idx_out = np.array([], int)
        self._limits: tuple | None = None
        self.on_pick = on_pick
        self._last_click = None
        self.fig.canvas.mpl_connect("pick_event", self._picked)
        # Blitting: the data artists are drawn over a cached background of the
        # axes, ticks and labels, which do not change while points are toggled.
        self.blit = (self.kind == "ipympl") if blit is None else blit
        self._animated = [self.band, self.fit_line, self.ref_line, self.err, self.pts_in,
                          self.pts_out, self.rerr, self.res_in, self.res_out, self.title]
        self._background = None
        if self.blit:
            for artist in self._animated:
                artist.set_animated(True)
            self.fig.canvas.mpl_connect("draw_event", self._on_full_draw)

    # -- canvas ---------------------------------------------------------------
    def _attach_canvas(self, canvas: str) -> str:
        if canvas in ("auto", "ipympl"):
            try:
                from ipympl.backend_nbagg import Canvas, FigureManager
            except ImportError:
                if canvas == "ipympl":
                    raise
            else:
                c = Canvas(self.fig)
                FigureManager(c, 0)
                c.header_visible = False
                c.footer_visible = False
                c.toolbar_visible = False
                c.resizable = False
                return "ipympl"
        from matplotlib.backends.backend_agg import FigureCanvasAgg

        FigureCanvasAgg(self.fig)
        return "agg"

    @property
    def canvas(self):
        return self.fig.canvas

    def png(self) -> bytes:
        """The current figure as PNG bytes (for the static fallback)."""
        import io

        from matplotlib.backends.backend_agg import FigureCanvasAgg

        live = self.fig.canvas
        buf = io.BytesIO()
        for artist in self._animated:  # animated artists are skipped by a plain draw
            artist.set_animated(False)
        try:
            # one printing canvas kept: its renderer, and so matplotlib's cache of parsed
            # mathtext labels (about 9 ms each), lives from one picture to the next
            if self._png_canvas is None:
                self._png_canvas = FigureCanvasAgg(self.fig)  # this sets fig.canvas ...
            self.fig.set_canvas(self._png_canvas)
            self._png_canvas.print_png(buf)
        finally:
            self.fig.set_canvas(live)  # ... so give the figure its own canvas back
            for artist in self._animated:
                artist.set_animated(self.blit)
        return buf.getvalue()

    # -- drawing --------------------------------------------------------------
    def _on_full_draw(self, event) -> None:
        self._background = self.canvas.copy_from_bbox(self.fig.bbox)
        self._draw_data()

    def _draw_data(self) -> None:
        for artist in self._animated:
            self.fig.draw_artist(artist)

    def redraw(self, full: bool = False) -> str:
        """Show the current artist data; returns "blit" or "full" (what was done)."""
        if self.blit and not full and self._background is not None:
            self.canvas.restore_region(self._background)
            self._draw_data()
            self.canvas.blit(self.fig.bbox)
            return "blit"
        self._background = None
        if self.kind == "ipympl":
            self.canvas.draw_idle()  # the front end asks for the frame when it is ready
        else:
            self.canvas.draw()
        return "full"

    # -- events ---------------------------------------------------------------
    def _picked(self, event) -> None:
        if self.on_pick is None or not len(getattr(event, "ind", [])):
            return
        # one click, one toggle: the toggle moves the point to the other artist,
        # which the same click would otherwise pick again
        if event.mouseevent is self._last_click:
            return
        self._last_click = event.mouseevent
        artist = event.artist
        if artist in (self.pts_in, self.res_in):
            idx = self._idx_in
        elif artist in (self.pts_out, self.res_out):
            idx = self._idx_out
        else:
            return
        k = int(event.ind[0])
        if k < len(idx):
            self.on_pick(int(idx[k]))

    # -- data -----------------------------------------------------------------
    def update(self, a, reference: bool = True, temperature_unit: str = "K") -> None:
        """Show analysis ``a``: changes artist data only, then asks for a redraw.

        The legend names the reference curve's source; the title gives T_m in
        ``temperature_unit`` (the panel's display unit)."""
        f = a.fit
        inc = np.asarray(a.include, bool)
        x = 1000.0 / a.T
        with np.errstate(invalid="ignore", divide="ignore"):
            y = np.log(a.p_vap)
            u = a.u_p_vap / a.p_vap
        ok = np.isfinite(y)
        fin, fout = inc & ok, ~inc & ok
        self._idx_in, self._idx_out = np.flatnonzero(fin), np.flatnonzero(fout)
        T_all = a.T[ok] if ok.any() else a.T
        pad = 0.06 * (T_all.max() - T_all.min() + 1.0)
        Tg = np.linspace(max(T_all.min() - pad, 1.0), T_all.max() + pad, 120)
        lo, hi = f.ln_p_band(Tg)
        xg = 1000.0 / Tg
        if hasattr(self.band, "set_data"):
            self.band.set_data(xg, lo, hi)
        else:  # matplotlib < 3.10
            verts = np.concatenate([np.c_[xg, lo], np.c_[xg[::-1], hi[::-1]]])
            self.band.set_verts([verts])
        self.fit_line.set_data(xg, f.ln_p(Tg))
        if reference and a.comparison is not None:
            self.ref_line.set_data(xg, a.comparison.curve.ln_p(Tg))
            label = f"reference: {a.comparison.curve.label}"
        else:
            self.ref_line.set_data([], [])
            label = "reference: none"
        legend_text = self.legend.get_texts()[1]
        relabel = legend_text.get_text() != label
        legend_text.set_text(label)
        self.pts_in.set_data(x[fin], y[fin])
        self.pts_out.set_data(x[fout], y[fout])
        self.err.set_segments([[(x[i], y[i] - u[i]), (x[i], y[i] + u[i])]
                               for i in self._idx_in])
        res = f.residuals
        self.res_in.set_data(x[fin], res[fin])
        self.res_out.set_data(x[fout], res[fout])
        self.rerr.set_segments([[(x[i], res[i] - u[i]), (x[i], res[i] + u[i])]
                                for i in self._idx_in])
        dH = f.enthalpy
        self.title.set_text(enthalpy_title(
            a.si.liquid, dH, D.quantity(f.T_m, None, temperature_unit, "temperature"),
            math=False))
        grown = self._keep_limits(xg, np.r_[y[ok], lo, hi], res[ok], u[ok])
        self.last_redraw = self.redraw(full=grown or relabel)

    def _keep_limits(self, xg, ys, res, u) -> bool:
        """Fixed limits that only grow: toggling never re-lays out the axes.

        Returns whether the limits changed (then the background must be redrawn).
        """
        xl = (float(np.min(xg)), float(np.max(xg)))
        yl = (float(np.nanmin(ys)), float(np.nanmax(ys)))
        rmax = float(np.nanmax(np.abs(res) + np.nan_to_num(u))) if len(res) else 0.1
        new = (xl, yl, rmax)
        if self._limits is None:
            grown = new
        else:
            (ox, oy, orr) = self._limits
            grown = ((min(ox[0], xl[0]), max(ox[1], xl[1])),
                     (min(oy[0], yl[0]), max(oy[1], yl[1])), max(orr, rmax))
        if grown != self._limits:
            self._limits = grown
            (x0, x1), (y0, y1), r = grown
            dy = 0.05 * (y1 - y0 + 1e-9)
            self.ax.set_xlim(x0, x1)
            self.ax.set_ylim(y0 - dy, y1 + dy)
            self.axr.set_ylim(-1.15 * r, 1.15 * r)
            return True
        return False

"""What every explorer shares: flow picker, parameter sliders, status line, progress, exports.

An explorer is a thin layer over the Python API. It builds its figure once and,
on every change, computes a result with the API and updates the existing
artists (``set_offsets``, ``set_array``, ``set_data``) before calling
``fig.canvas.draw_idle()``. While a slider is dragged a cheap *preview* is
computed (throttled); once the slider rests the *full* result follows
(debounced). See :mod:`flowkit.lab.controls` for how both paths run with and
without an event loop.

Subclasses implement:

``_build_axes()``
    create the axes and the (empty) artists, once;
``_warm(flow)``
    compile, or load from the disk cache, the kernels the explorer needs;
``_compute(flow, preview)``
    the result for the current controls (through the public API);
``_draw(result, preview)``
    put a result into the existing artists;
``paper_figure()``, ``save_data(path)``
    the exports.
"""

from __future__ import annotations

import contextlib
import html
import io
import time
from pathlib import Path

import flowkit
from flowkit.errors import FlowkitError
from flowkit.flows.base import Flow
from flowkit.lab.controls import Debouncer, moved, param_sliders
from flowkit.lab.figures import PAPER_STYLE, file_stem

#: Presets offered by the flow picker (their domain is bounded, so default seeds exist).
EXPLORER_PRESETS = ("stf", "hill", "abc", "roberts", "circular")


def resolve_flow(flow, params: dict | None) -> Flow:
    """A :class:`Flow` from a preset name or a Flow, with ``params`` applied."""
    if isinstance(flow, str):
        return flowkit.flow(flow, **(params or {}))
    if isinstance(flow, Flow):
        return flow.with_params(**params) if params else flow
    raise FlowkitError(f"`flow` must be a preset name (e.g. 'stf') or a flowkit Flow; got {type(flow).__name__}")


class Explorer:
    """Base class of the explorers (see the module notes).

    Parameters
    ----------
    flow : str or Flow
        Preset name or a flow of your own (it is added to the flow picker).
    params : dict, optional
        Parameter values to start from.
    presets : sequence of str
        Preset names offered by the flow picker.
    figsize : (float, float)
        Figure size in inches.
    export_dir : str or Path
        Folder for the export buttons (created on first export).
    delays : (float, float)
        Throttle interval of the preview and quiet time before the full result, seconds.
    """

    kind = "explorer"

    def __init__(self, flow="stf", *, params: dict | None = None, presets=EXPLORER_PRESETS,
                 figsize=(5.5, 5.0), export_dir="exports", delays=(0.08, 0.6)):
        import ipywidgets as w

        start = resolve_flow(flow, params)
        self._flows: dict[str, Flow] = {name: None for name in presets}
        key = start.name if isinstance(flow, str) else f"{start.name} (yours)"
        self._flows[key] = start
        self._defaults = start
        self.export_dir = Path(export_dir)
        self.result = None          #: latest full result
        self.showing: str | None = None  #: "preview" or "full": what the artists show now
        self.timings: dict[str, float] = {}  #: seconds of the last compile / preview / full / draw
        self._warmed: set[tuple] = set()
        self._displayed = False
        self._quiet = False
        self._png = None
        self.message = ""  #: plain text of the status line
        self._layout_key = None

        self.flow_picker = w.Dropdown(options=list(self._flows), value=key, description="flow")
        self.flow_picker.observe(self._on_flow_picked, names="value")
        self.sliders: dict[str, w.FloatSlider] = {}
        self.sliders_box = w.VBox()
        self._base = start
        self._make_sliders(start)
        self.status = w.HTML(value="")
        self.log = w.Output()  # progress bars of long jobs
        self.reset_button = w.Button(description="reset", tooltip="restore the starting flow, parameters and seeds")
        self.reset_button.on_click(lambda _b: self.reset())
        self.export_buttons = {
            "pdf": w.Button(description="PDF", tooltip="paper figure, vector axes, rasterized points"),
            "png": w.Button(description="PNG", tooltip="paper figure, 300 dpi"),
            "npz": w.Button(description="data (npz)", tooltip="raw result with provenance"),
        }
        for fmt, button in self.export_buttons.items():
            button.on_click(lambda _b, fmt=fmt: self.export(fmt))
        self._preview = Debouncer(delays[0], self._run_preview, "throttle")
        self._full = Debouncer(delays[1], self._run_full, "debounce")

        import matplotlib.pyplot as plt

        with plt.ioff():  # the figure is shown inside the widget layout, not by pyplot
            self.fig = plt.figure(figsize=figsize, layout="constrained")
        canvas = self.fig.canvas
        for attr, val in (("header_visible", False), ("footer_visible", False), ("resizable", False)):
            if hasattr(canvas, attr):
                setattr(canvas, attr, val)
        self._build_axes()
        self.fig.canvas.mpl_connect("button_press_event", self._on_click)

    # -- flows and parameters -------------------------------------------------------
    @property
    def flow(self) -> Flow:
        """The flow the controls describe now."""
        return self._base.with_params(**{k: s.value for k, s in self.sliders.items()})

    def _make_sliders(self, base: Flow) -> None:
        self.sliders = param_sliders(base, self._on_param)
        self.sliders_box.children = tuple(self.sliders.values())

    def _on_param(self, change=None) -> None:
        if not self._quiet and (change is None or moved(change)):
            self.changed()

    def changed(self) -> None:
        """Something the result depends on changed: preview now-ish, full result when things rest."""
        self._preview.trigger()
        self._full.trigger()

    def _on_flow_picked(self, change) -> None:
        key = change["new"]
        if self._flows.get(key) is None:
            self._flows[key] = flowkit.flow(key)
        self._base = self._flows[key]
        self._make_sliders(self._base)
        self._flow_changed()
        self.update()

    def _flow_changed(self) -> None:
        """Hook: the flow family changed (reset seeds, planes, ranges)."""

    def reset(self) -> None:
        """Restore the starting flow, parameters and controls, and recompute."""
        key = next(k for k, v in self._flows.items() if v is self._defaults)
        if self.flow_picker.value != key:
            self.flow_picker.value = key  # recomputes through _on_flow_picked
        self._quiet = True  # set the sliders without a preview per slider
        try:
            for name, value in self._defaults.param_dict.items():
                self.sliders[name].value = value
        finally:
            self._quiet = False
        self._flow_changed()
        self.update()

    # -- running ---------------------------------------------------------------------
    def update(self) -> None:
        """Compute and draw the full result now (cancels a waiting one)."""
        self._full.cancel()
        self._run_full()

    def flush(self) -> bool:
        """Run a waiting full update now (as if the slider had rested); return whether one ran."""
        return self._full.flush()

    def _run_preview(self) -> None:
        self._run(preview=True)

    def _run_full(self) -> None:
        self._run(preview=False)

    def _run(self, preview: bool) -> None:
        try:
            flow = self.flow
            self._ensure_compiled(flow)
            tic = time.perf_counter()
            result = self._compute(flow, preview)
            tac = time.perf_counter()
            self._draw(result, preview)
            self._fit_layout()
            self._draw_idle()
            toc = time.perf_counter()
        except FlowkitError as exc:  # bad input: the message says how to fix it
            self.say(f"{exc}", error=True)
            return
        except Exception as exc:  # a bug: say so where the user looks, and keep the traceback
            self.say(f"{type(exc).__name__}: {exc} (traceback in the log)", error=True)
            raise
        self.timings["preview" if preview else "full"] = tac - tic
        self.timings["draw"] = toc - tac
        self.showing = "preview" if preview else "full"
        if not preview:
            self.result = result
            self.say(f"{self._label(flow)}: {self._describe(result)} — {tac - tic:.2f} s")
        else:
            self.say("preview (release the slider for the full result)")

    def _ensure_compiled(self, flow: Flow) -> None:
        key = (id(flow.family), self._warm_tag())
        if key in self._warmed:
            return
        self.say(f"compiling… kernels for '{flow.name}' are built on first use (cached on disk for next time)")
        tic = time.perf_counter()
        self._warm(flow)
        self.timings["compile"] = time.perf_counter() - tic
        self._warmed.add(key)

    @contextlib.contextmanager
    def long_job(self):
        """Route the API's own progress bars (tqdm) into the explorer's log area."""
        self.log.clear_output()
        with self.log:
            yield
        self.log.clear_output()

    def say(self, text: str, error: bool = False) -> None:
        """Write one line into the status area."""
        self.message = text
        colour = "#b00020" if error else "#333"
        self.status.value = f'<span style="color:{colour}">{html.escape(text)}</span>'

    @staticmethod
    def _label(flow: Flow) -> str:
        """'stf, rotation = 0.3': the flow and its parameters, for titles and the status line."""
        pars = ", ".join(f"{k} = {v:.3g}" for k, v in flow.param_dict.items())
        return flow.name + (f", {pars}" if pars else "")

    def _warm_tag(self) -> str:
        """Hook: names the set of kernels :meth:`_warm` loads (a new tag warms again)."""
        return ""

    def _describe(self, result) -> str:
        return repr(result)

    # -- figure ----------------------------------------------------------------------
    def _fit_layout(self) -> None:
        """Run the constrained layout only when labels or visible axes changed, then freeze it.

        The layout engine costs about as much as drawing 10,000 points; a slider
        move changes data, not the frame, so the frame is laid out once.
        """
        axes = [*self.fig.axes, *(child for ax in self.fig.axes for child in ax.child_axes)]  # insets too
        key = tuple((ax.get_visible(), ax.get_xlabel(), ax.get_ylabel()) for ax in axes)
        if key == self._layout_key:
            return
        self.fig.set_layout_engine("constrained")
        self.fig.draw_without_rendering()
        self.fig.set_layout_engine("none")
        self._layout_key = key

    def _draw_idle(self) -> None:
        self.fig.canvas.draw_idle()
        if self._png is not None:  # not an interactive canvas: refresh the static picture
            buf = io.BytesIO()
            self.fig.savefig(buf, format="png", dpi=90)
            self._png.value = buf.getvalue()

    def _on_click(self, event) -> None:
        """Hook: a mouse press on the figure (``button_press_event``)."""

    def _canvas_widget(self):
        import ipywidgets as w

        if isinstance(self.fig.canvas, w.DOMWidget):  # ipympl: the canvas is a widget
            return self.fig.canvas
        self._png = w.Image(format="png")
        self._draw_idle()
        return self._png

    def _extra_controls(self) -> list:
        """Hook: widgets placed under the parameter sliders."""
        return []

    @property
    def widget(self):
        """The whole explorer as one ipywidgets box."""
        import ipywidgets as w

        if getattr(self, "_widget", None) is None:
            # The controls keep their width and move under the figure when the notebook is too
            # narrow for both side by side (a laptop window with the file browser open).
            side = w.VBox([w.HBox([self.flow_picker, self.reset_button]), self.sliders_box,
                           *self._extra_controls(), w.HBox(list(self.export_buttons.values())),
                           self.log, self.status], layout=w.Layout(width="400px", flex="0 0 auto"))
            canvas = self._canvas_widget()
            canvas.layout.flex = "0 0 auto"
            self._widget = w.HBox([canvas, side], layout=w.Layout(flex_flow="row wrap", align_items="flex-start"))
        return self._widget

    def show(self):
        """Display the explorer, then compute the first result (the status line shows progress)."""
        from IPython.display import display

        display(self.widget)
        self._displayed = True
        if self.result is None:
            self.update()

    def _ipython_display_(self):
        self.show()

    def close(self) -> None:
        """Close the figure and the widgets."""
        import matplotlib.pyplot as plt

        self._preview.cancel()
        self._full.cancel()
        plt.close(self.fig)
        if getattr(self, "_widget", None) is not None:
            self._widget.close()

    # -- exports -----------------------------------------------------------------------
    def export(self, fmt: str, path=None) -> Path:
        """Write the paper figure (``"pdf"``, ``"png"``) or the raw result (``"npz"``); return the path."""
        if fmt not in ("pdf", "png", "npz"):
            raise FlowkitError(f"`fmt` must be 'pdf', 'png' or 'npz'; got {fmt!r}")
        if path is not None:  # checked before any work: a bad path must not cost a finished result
            from flowkit.validation import output_path

            output_path(path, "path", (f".{fmt}",))
        if self.result is None:
            self.update()
        if self.result is None:
            raise FlowkitError(f"nothing to export: the current settings gave no result ({self.message})")
        if path is None:
            self.export_dir.mkdir(parents=True, exist_ok=True)
            path = self.export_dir / f"{file_stem(self.kind, self.flow)}.{fmt}"
        path = Path(path)
        if fmt == "npz":
            path = Path(self.save_data(path) or path)
        else:
            import matplotlib as mpl

            from flowkit.results.files import write_safely

            with mpl.rc_context(PAPER_STYLE):
                fig = self.paper_figure()
                path = write_safely(path, lambda p: fig.savefig(p, format=fmt, dpi=300))
        self.say(f"wrote {path}")
        return path

    def paper_figure(self):
        """Hook: a new :class:`matplotlib.figure.Figure` of the current full result."""
        raise NotImplementedError

    def save_data(self, path: Path) -> None:
        """Hook: write the current full result with its provenance."""
        raise NotImplementedError

    # -- subclass hooks ------------------------------------------------------------------
    def _build_axes(self) -> None:
        raise NotImplementedError

    def _warm(self, flow: Flow) -> None:
        raise NotImplementedError

    def _compute(self, flow: Flow, preview: bool):
        raise NotImplementedError

    def _draw(self, result, preview: bool) -> None:
        raise NotImplementedError

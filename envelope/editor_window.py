"""The outline editor's window: matplotlib glue around `envelope.editor.OutlineEditor` (edge).

The plotting library's own key map (``s`` opens a save-figure dialog, ``p`` pans, ``k`` and
``g`` switch axis scales...) is switched off in this window: its keys are the editor's only.
"""

from __future__ import annotations

import json
import textwrap
from pathlib import Path

import numpy as np

from .editor import SHORTCUTS, OutlineEditor

__all__ = ["build_editor_figure", "run_editor"]


def _disconnect_default_keys(fig) -> None:
    """Switch off matplotlib's default key handler (and toolbar key bindings) for `fig`."""
    manager = getattr(fig.canvas, "manager", None)
    hid = getattr(manager, "key_press_handler_id", None)
    if hid is not None:
        fig.canvas.mpl_disconnect(hid)
        manager.key_press_handler_id = None


def build_editor_figure(image_c, geojson_path, element_names=(), title="", view_elements=None,
                        survey_file=None, thermogram_id=None, note=""):
    """Build the editor figure (any backend) and connect its events.

    Parameters
    ----------
    image_c : array_like, shape (H, W)
        Surface temperatures (or readings) [°C].
    geojson_path : str or Path
        Outline file; loaded when it exists (opens empty otherwise), written on "s".
    element_names : iterable of str
        The survey's elements (a typed name outside them is refused).
    title : str
    view_elements : iterable of str, optional
        The elements this view should show: the numbered list (default: all).
    survey_file, thermogram_id : optional
        Where "s" writes a picked scale (the thermogram's entry in survey.toml).
    note : str
        A line under the title (e.g. "readings as exported").

    Returns
    -------
    (fig, editor, handlers)
        ``handlers`` holds the connected callbacks (``"press"``, ``"motion"``,
        ``"release"``, ``"key"``, ``"name"``), the ``"textbox"`` widget and ``"redraw"``.
    """
    import matplotlib.patheffects as pe
    import matplotlib.pyplot as plt
    from matplotlib.widgets import TextBox

    img = np.asarray(image_c, dtype=float)
    path = Path(geojson_path)
    editor = OutlineEditor(shape_px=img.shape, element_names=element_names,
                           view_elements=view_elements)
    if path.exists():
        try:
            editor.from_geojson(json.loads(path.read_text(encoding="utf-8")))
        except (OSError, UnicodeDecodeError, json.JSONDecodeError, RecursionError):
            editor.message = f"{path.name} could not be read; saving will ask before replacing it"
    finite = img[np.isfinite(img)]
    lo, hi = (np.percentile(finite, [1, 99]) if finite.size else (0.0, 1.0))
    fig = plt.figure(figsize=(11.0, 6.5))
    _disconnect_default_keys(fig)
    ax = fig.add_axes((0.07, 0.12, 0.58, 0.78))
    # extent: pixel [row, col] spans x in [col, col + 1], y in [row, row + 1], as in the
    # outline files (its centre is at (col + 0.5, row + 0.5))
    im = ax.imshow(img, cmap="inferno", vmin=lo, vmax=hi if hi > lo else lo + 1,
                   interpolation="nearest", extent=(0, img.shape[1], img.shape[0], 0))
    fig.colorbar(im, ax=ax, fraction=0.046, pad=0.03).set_label("Surface temperature [°C]")
    ax.set_title(_plain(title or f"outlines: {path.name}"), fontsize=10)
    ax.set_xlabel("x [px]")
    ax.set_ylabel("y [px]")
    ax.set_autoscale_on(False)
    text_ax = fig.add_axes((0.14, 0.02, 0.43, 0.05))
    keys = "\n".join(f"{k:<12} {v}" for k, v in SHORTCUTS)
    listed = "\n".join(textwrap.shorten(f"{i + 1}  {n}", 34) for i, n in
                       enumerate(editor.view_elements[:9]))
    fig.text(0.73, 0.95, keys + (f"\n\nthis view's elements:\n{listed}" if listed else ""),
             va="top", family="monospace", fontsize=8)
    status = fig.text(0.05, 0.955, "", fontsize=9)
    if note:
        fig.text(0.05, 0.925, _plain(note), fontsize=8, color="dimgray")
    artists: list = []
    state = {"confirm_overwrite": False}
    halo = [pe.withStroke(linewidth=3.2, foreground="black")]  # readable on any colour

    def redraw():
        for a in artists:
            a.remove()
        artists.clear()
        for i, poly in enumerate(editor.polygons):
            v = np.asarray(poly["vertices"], dtype=float).reshape(-1, 2)
            if poly["closed"] and len(v):
                v = np.vstack([v, v[:1]])
            ls = "--" if poly["role"] == "reference" else "-"
            colour = "cyan" if i == editor.current else "white"
            (line,) = ax.plot(v[:, 0], v[:, 1], ls, color=colour, lw=1.4, marker="o", ms=3,
                              path_effects=halo)
            artists.append(line)
            if poly["element"] and len(v):
                cx, cy = v[:-1].mean(axis=0) if poly["closed"] else v.mean(axis=0)
                artists.append(ax.text(cx, cy, _plain(f"{poly['element']} ({poly['role']})"),
                                       color=colour, fontsize=8, ha="center", va="center",
                                       path_effects=halo))
        pts = list(editor.scale_points)
        if editor.scale is not None and editor.mode == "outline":
            table, vals = editor.scale
            pts = [vals["pixel_a"], vals["pixel_b"]] if table == "known_length" else vals["pixel_xy"]
        if pts:
            p = np.asarray(pts, dtype=float).reshape(-1, 2)
            artists.extend(ax.plot(p[:, 0], p[:, 1], "+", color="lime", ms=12, mew=2,
                                   ls="-" if len(p) == 2 else "none", lw=1, path_effects=halo))
        if editor.selected is not None:
            i, j = editor.selected
            x, y = editor.polygons[i]["vertices"][j]
            artists.extend(ax.plot([x], [y], "s", mfc="none", mec="lime", ms=8))
        status.set_text(_plain(editor.message))
        fig.canvas.draw_idle()

    def clear_box():
        textbox.eventson = False
        textbox.set_val("")
        textbox.eventson = True
        textbox.cursor_index = 0

    def on_press(event):
        if event.inaxes is not ax or textbox.capturekeystrokes:
            return
        button = int(event.button) if event.button is not None else 0
        if editor.click(event.xdata, event.ydata, button):
            if editor.wants_text():
                clear_box()
                state["start_typing"] = True
                after_key(None)
            redraw()

    def on_motion(event):
        if event.inaxes is ax and editor.drag(event.xdata, event.ydata):
            redraw()

    def on_release(event):
        editor.release()

    def on_key(event):
        # connected before the text box: while it captures keys they are not shortcuts
        if textbox.capturekeystrokes:
            return
        action = editor.key(event.key)
        if action == "save":
            save()
        else:
            state["confirm_overwrite"] = False
        if action == "edit-name":
            clear_box()
            state["start_typing"] = True  # after the text box has seen this "e"
        if action:
            redraw()

    def save():
        exists = path.exists()
        try:
            editor.save(path, overwrite=exists and state["confirm_overwrite"])
            state["confirm_overwrite"] = False
        except FileExistsError:
            state["confirm_overwrite"] = True
            editor.message = f"{path.name} exists: press s again to overwrite it"
            return
        except OSError as exc:
            editor.message = f"could not save {path.name}: {exc.strerror or exc}"
            return
        left = editor.problems()
        if editor.scale is not None and survey_file is not None and thermogram_id is not None:
            from .errors import SurveyError

            try:
                editor.save_scale(survey_file, thermogram_id)
                editor.message += f"; scale written to {Path(survey_file).name}"
            except (SurveyError, OSError) as exc:
                editor.message += f"; scale NOT written ({exc})"
        if left:
            editor.message += f" ({'; '.join(left[:2])})"

    def after_key(event):
        if state.pop("start_typing", False):
            textbox.begin_typing()

    def on_name(text):
        if textbox.capturekeystrokes:  # enter: stop typing, which submits once more
            textbox.stop_typing()
            return
        done = editor.scale_text(text) if editor.mode != "outline" else editor.set_name(text)
        clear_box()  # a fresh box for the next name
        if editor.wants_text():
            state["start_typing"] = True
            after_key(None)
        redraw()
        return done

    cids = [fig.canvas.mpl_connect("button_press_event", on_press),
            fig.canvas.mpl_connect("motion_notify_event", on_motion),
            fig.canvas.mpl_connect("button_release_event", on_release),
            fig.canvas.mpl_connect("key_press_event", on_key)]
    textbox = TextBox(text_ax, "name / metres ")  # its key handler runs after on_key
    cids.append(fig.canvas.mpl_connect("key_press_event", after_key))
    textbox.on_submit(on_name)
    redraw()
    handlers = {"press": on_press, "motion": on_motion, "release": on_release, "key": on_key,
                "name": on_name, "textbox": textbox, "redraw": redraw, "axes": ax,
                "cids": cids}
    return fig, editor, handlers


def _plain(text: str) -> str:
    """Text for a figure: control characters replaced and ``$`` escaped (no math parsing)."""
    return "".join(c if c.isprintable() else "?" for c in str(text)).replace("$", r"\$")


_INTERACTIVE_BACKENDS = ("QtAgg", "TkAgg", "GTK4Agg", "GTK3Agg", "MacOSX", "WXAgg")


def run_editor(image_c, geojson_path, element_names=(), title="", **kwargs) -> None:
    """Open the outline editor on a thermogram and block until its window is closed.

    Parameters as `build_editor_figure`.

    Raises
    ------
    RuntimeError
        When no interactive matplotlib backend can be started (no display).
    """
    import matplotlib
    import matplotlib.pyplot as plt

    backend = matplotlib.get_backend().lower()
    if backend in ("agg", "pdf", "ps", "svg", "cairo", "template") or "inline" in backend:
        for name in _INTERACTIVE_BACKENDS:
            try:
                plt.switch_backend(name)
                break
            except (ImportError, RuntimeError, ValueError):
                continue
        else:
            raise RuntimeError("the outline editor needs an interactive matplotlib backend "
                               "(a display and Qt, Tk or GTK); none could be started")
    build_editor_figure(image_c, geojson_path, element_names, title, **kwargs)
    plt.show()

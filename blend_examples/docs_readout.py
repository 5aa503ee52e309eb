"""README picture of the Check panel: its readout as its own ``draw()`` lays it out.

Headless Blender has no window, so the panel cannot be screenshotted. Instead
:func:`record_panel` runs the sub-panel's ``draw()`` against a small recorder
standing in for ``UILayout`` (each property name is looked up in the settings'
RNA, as a real layout would), and :func:`draw_readout` lays the recorded
buttons, settings and lines out as a panel with matplotlib.
"""

from types import SimpleNamespace

import bpy

from demo_pictures import _pyplot


class _Recorder:
    """Stands in for ``bpy.types.UILayout``: keeps what ``draw()`` puts where."""

    def __init__(self, kind="column"):
        self.kind, self.items = kind, []
        self.use_property_split = self.use_property_decorate = False
        self.enabled, self.active, self.scale_y = True, True, 1.0

    def _nest(self, kind):
        child = _Recorder(kind)
        self.items.append(child)
        return child

    def row(self, **_):
        return self._nest("row")

    def column(self, **_):
        return self._nest("column")

    def box(self):
        return self._nest("box")

    def label(self, text="", icon="NONE"):
        self.items.append(("label", text, icon))

    def prop(self, data, name, text=None, **_):
        rna = data.bl_rna.properties[name]  # KeyError on a name a real layout would refuse too
        self.items.append(("prop", rna, getattr(data, name), rna.name if text is None else text))

    def operator(self, idname, text=None, icon="NONE", emboss=True, **_):
        module, name = idname.split(".")
        op = getattr(getattr(bpy.ops, module), name)
        self.items.append(("operator", op.get_rna_type().name if text is None else text, icon, emboss))
        return SimpleNamespace()  # operator properties set by draw() (e.g. ``index``)


def record_panel(panel_class, context):
    """The root :class:`_Recorder` after ``panel_class.draw`` ran on it."""
    root = _Recorder()
    panel_class.draw(SimpleNamespace(layout=root), context)
    return root


def panel_text(node):
    """Every text the recorded panel shows, in drawing order (for the log)."""
    out = []
    for item in node.items:
        if isinstance(item, _Recorder):
            out += panel_text(item)
        elif item[0] in ("label", "operator"):
            out.append(item[1])
        else:
            out.append(f"{item[3]}: {_prop_value(item[1], item[2])}")
    return out


def _prop_value(rna, value):
    if rna.type == "BOOLEAN":
        return "on" if value else "off"
    if rna.type == "FLOAT":
        return f"{value:.3f} m" if rna.subtype == "DISTANCE" else f"{value:.3f}"
    return str(value)


_LINE, _PAD = 22, 8  # row height and padding [px]
_BG, _BOX, _BUTTON, _FIELD, _TEXT = "#303030", "#3d3d3d", "#545454", "#1d1d1d", "#e6e6e6"


def _height(node):
    if not isinstance(node, _Recorder):
        return _LINE
    if node.kind == "row":
        return max([_height(i) for i in node.items] or [0])
    inner = sum(_height(i) for i in node.items)
    return inner + (2 * _PAD if node.kind == "box" else 0)


def _draw_item(ax, item, x, y, w):
    from matplotlib.patches import FancyBboxPatch

    kind = item[0]
    mid = y + _LINE / 2
    if kind == "label":
        prefix = "(i) " if item[2] == "INFO" else ""
        ax.text(x + 4, mid, prefix + item[1], color=_TEXT, va="center", fontsize=8.5)
    elif kind == "operator":
        text, icon, emboss = item[1], item[2], item[3]
        if emboss:
            ax.add_patch(FancyBboxPatch((x + 1, y + 2), w - 2, _LINE - 4, boxstyle="round,pad=0,rounding_size=4",
                                        fc=_BUTTON, ec="#2a2a2a", lw=0.8))
        shown = text or {"X": "x"}.get(icon, "")
        ax.text(x + (w / 2 if emboss else 4), mid, shown, color=_TEXT, va="center",
                ha="center" if emboss else "left", fontsize=8.5, weight="bold" if not emboss else "normal")
    else:
        rna, value, text = item[1], item[2], item[3]
        if rna.type == "BOOLEAN":
            ax.add_patch(FancyBboxPatch((x + 4, mid - 6), 12, 12, boxstyle="round,pad=0,rounding_size=2",
                                        fc="#4772b3" if value else _BUTTON, ec="#2a2a2a", lw=0.8))
            if value:
                ax.text(x + 10, mid, "v", color="white", ha="center", va="center", fontsize=7, weight="bold")
            ax.text(x + 22, mid, text, color=_TEXT, va="center", fontsize=8.5)
        else:
            ax.add_patch(FancyBboxPatch((x + 1, y + 2), w - 2, _LINE - 4, boxstyle="round,pad=0,rounding_size=4",
                                        fc=_FIELD, ec="#2a2a2a", lw=0.8))
            ax.text(x + 8, mid, text, color="#bdbdbd", va="center", fontsize=8.5)
            ax.text(x + w - 8, mid, _prop_value(rna, value), color=_TEXT, va="center", ha="right", fontsize=8.5)


def _draw_node(ax, node, x, y, w):
    """Draw ``node`` with its top-left corner at (x, y) [px, y down]; return its height."""
    from matplotlib.patches import FancyBboxPatch

    if not isinstance(node, _Recorder):
        _draw_item(ax, node, x, y, w)
        return _LINE
    h = _height(node)
    if node.kind == "row":
        n = max(len(node.items), 1)
        # Icon-only buttons stay narrow, the others share the row (as Blender sizes them).
        narrow = [not isinstance(i, _Recorder) and i[0] == "operator" and not i[1] for i in node.items]
        wide_w = (w - 28 * sum(narrow)) / max(n - sum(narrow), 1)
        cx = x
        for item, small in zip(node.items, narrow):
            iw = 28 if small else wide_w
            _draw_node(ax, item, cx, y, iw)
            cx += iw
        return h
    if node.kind == "box":
        ax.add_patch(FancyBboxPatch((x + 2, y + 2), w - 4, h - 4, boxstyle="round,pad=0,rounding_size=5",
                                    fc=_BOX, ec="#262626", lw=0.8))
        x, y, w = x + _PAD, y + _PAD, w - 2 * _PAD
    for item in node.items:
        y += _draw_node(ax, item, x, y, w)
    return h


def draw_readout(root, title, note, path, width=430):
    """The recorded panel as a PNG: a header with the panel's title, its rows under it, ``note`` below."""
    import textwrap

    plt = _pyplot()
    body = _height(root)
    note_lines = textwrap.wrap(note, 76)
    panel = _LINE + 4 + 2 * _PAD + body
    height = panel + 14 * len(note_lines) + 12
    fig = plt.figure(figsize=(width / 100, height / 100), dpi=100)
    ax = fig.add_axes([0, 0, 1, 1])
    ax.set_xlim(0, width)
    ax.set_ylim(height, 0)
    ax.set_axis_off()
    ax.add_patch(plt.Rectangle((0, 0), width, panel, fc=_BG, ec="none"))
    ax.add_patch(plt.Rectangle((0, 0), width, _LINE + 4, fc="#282828", ec="none"))
    ax.text(10, (_LINE + 4) / 2, "\u25be  " + title, color=_TEXT, va="center", fontsize=9, weight="bold")
    _draw_node(ax, root, _PAD, _LINE + 4 + _PAD, width - 2 * _PAD)
    for k, line in enumerate(note_lines):
        ax.text(6, panel + 10 + 14 * k, line, color="#333333", va="center", fontsize=7)
    fig.savefig(path, dpi=100, facecolor="white", pil_kwargs={"optimize": True})
    plt.close(fig)
    return path

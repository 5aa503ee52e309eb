"""Text for panels: Blender labels do not wrap, so long sentences are cut into lines here."""


def wrap_text(text, width=48):
    """``text`` as lines of at most ``width`` characters, broken between words."""
    words, lines, line = text.split(), [], ""
    for w in words:
        if line and len(line) + 1 + len(w) > width:
            lines.append(line)
            line = w
        else:
            line = f"{line} {w}".strip()
    if line:
        lines.append(line)
    return lines

"""The sheets' matplotlib style (fonts, sizes, unhinted glyphs), shared by the sheets and the layout audit."""


def style():
    """Style context: matplotlib defaults plus the sheets' fonts and sizes.

    ``svg.fonttype = 'none'`` keeps SVG text as ``<text>`` elements and
    ``pdf.fonttype = 42`` embeds TrueType fonts so PDF text stays searchable.
    """
    import contextlib

    import matplotlib
    import matplotlib.style

    stack = contextlib.ExitStack()
    stack.enter_context(matplotlib.style.context("default"))
    stack.enter_context(matplotlib.rc_context({
        "font.family": "sans-serif", "font.sans-serif": ["DejaVu Sans"], "font.size": 7.5,
        "text.usetex": False, "svg.fonttype": "none", "svg.hashsalt": "profiler",
        "pdf.fonttype": 42, "ps.fonttype": 42, "axes.linewidth": 0.7, "axes.labelsize": 8,
        "xtick.labelsize": 7, "ytick.labelsize": 7, "xtick.major.width": 0.6, "ytick.major.width": 0.6,
        "hatch.linewidth": 0.6, "legend.fontsize": 7, "figure.facecolor": "white",
        "savefig.facecolor": "white", "axes.unicode_minus": True,
        # Unhinted glyphs: text widths scale with the resolution (within 0.1 %), so a sheet laid out at
        # one dpi fits at any other and in PDF/SVG (hinting made them differ by up to 3 %).
        "text.hinting": "no_hinting", "image.interpolation": "antialiased",
    }))
    return stack

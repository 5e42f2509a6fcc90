"""The footer of a figure: the legend of its main axes above a wrapped caption, never overlapping.

Both are kept out of matplotlib's constrained layout and placed in an axes-free
strip under the charts; the strip grows until the two boxes are apart.
``footer_boxes`` gives the boxes (tests check them as geometry).
"""

from __future__ import annotations

import textwrap


def add_footer(foot, ax, caption, width=None):
    """An axes-free strip under the charts: the legend of ``ax`` on top, the caption below.

    After a first layout the strip is made taller until the legend's box and the
    caption's box do not overlap (``footer_boxes`` gives them).  Returns the
    (legend, caption) artists.
    """
    foot.set_axis_off()
    fig = foot.figure
    if width is None:  # characters of 7.5 pt text across the figure (125 on 8 inches)
        width = max(40, int(125 * fig.get_figwidth() / 8.0))

    from matplotlib.transforms import blended_transform_factory

    centre = blended_transform_factory(fig.transFigure, foot.transAxes)

    def make_legend(ncols):  # centred on the figure (not the axes) so a wide one fits
        leg = foot.legend(*ax.get_legend_handles_labels(), loc="upper center", ncols=ncols,
                          fontsize=8, frameon=False, bbox_to_anchor=(0.5, 1.0),
                          bbox_transform=centre)
        leg.set_in_layout(False)  # placed by the loop below, not by constrained layout
        return leg

    legend = make_legend(2)
    text = foot.text(0.0, 0.0, "\n".join(textwrap.wrap(caption, width)), fontsize=7.5,
                     ha="left", va="bottom", transform=foot.transAxes, in_layout=False)
    fig._exactband_footer = (legend, text)
    if footer_boxes(fig)[0].width > 0.98 * fig.bbox.width:  # two columns do not fit
        legend.remove()
        legend = make_legend(1)
        fig._exactband_footer = (legend, text)
    gs = foot.get_subplotspec().get_gridspec()
    ratios = list(gs.get_height_ratios() or [1.0] * gs.nrows)
    row = foot.get_subplotspec().rowspan.start
    for _ in range(12):
        leg, cap = footer_boxes(foot.figure)
        if leg.y0 > cap.y1 + 2:  # pixels of clear space between them
            break
        need = leg.height + cap.height + 8.0  # the strip's height in pixels that fits both
        ratios[row] *= max(1.05, need / max(foot.get_window_extent().height, 1.0))
        gs.set_height_ratios(ratios)
    return legend, text


def footer_boxes(fig):
    """Display-space boxes (legend, caption) of a figure's footer, after a layout."""
    legend, text = fig._exactband_footer
    fig.draw_without_rendering()
    return legend.get_window_extent(), text.get_window_extent()

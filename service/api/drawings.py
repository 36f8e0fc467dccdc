"""SVG drawings of one case's results, for ``Accept: image/svg+xml``.

matplotlib is imported inside the functions, so the JSON path never pays for it. The drawings use
matplotlib's object interface (``Figure`` and its own canvas, the Agg renderer for raster output),
never ``pyplot``: no global figure state, safe in any worker thread. Text stays text in the SVG
(``svg.fonttype: none``), and the output carries no date, so the same case draws the same bytes.

Every drawn element a reader may want to find carries an ``id`` (matplotlib's ``gid``): the blade rows
of a flowpath are ``row-1`` .. ``row-2n`` in flow order, the vectors of a velocity triangle
``vector-V1``, ``vector-W1``, ``vector-U1`` and so on.
"""

from __future__ import annotations

import io

ROTOR_COLOUR = "#c0504d"
STATOR_COLOUR = "#4f81bd"
_STYLE = {"svg.fonttype": "none", "svg.hashsalt": "meanline", "font.size": 9}


def _svg(figure) -> str:
    import matplotlib

    buffer = io.StringIO()
    with matplotlib.rc_context(_STYLE):
        figure.savefig(buffer, format="svg", metadata={"Date": None})
    return buffer.getvalue()


def flowpath_svg(payload: dict, body: dict) -> str:
    """:func:`flowpath_figure` as an SVG document."""
    return _svg(flowpath_figure(payload, body))


#: Outline colours of the rows whose hub or tip check warns or fails.
_FLAG_COLOURS = {"warn": "#e69f00", "fail": "#000000"}

#: Line styles of the hub and tip triangles drawn over the mean ones (when the answer has them).
_SPAN_STYLES = (("hub", ":"), ("tip", "--"))


def triangles_svg(payload: dict, body: dict) -> str:
    """:func:`triangles_figure` as an SVG document."""
    return _svg(triangles_figure(payload, body))


def flowpath_figure(payload: dict, body: dict):
    """The meridional flowpath of a machine-design result: hub and tip lines and every blade row.

    Parameters
    ----------
    payload : dict
        The request (one case): gives the machine.
    body : dict
        The machine-design result of that case.

    Returns
    -------
    matplotlib.figure.Figure
        Axial position [m] against radius [m], equal scales; rotor rows red, stator
        rows blue, each labelled with its name and blade count, ids ``row-1`` .. ``row-2n``; a row
        whose hub or tip check warns is outlined (id ``row-j-warn``), one that fails outlined and
        hatched (``row-j-fail``), and labelled with the span ends flagged.
    """
    import matplotlib
    from matplotlib.figure import Figure
    from matplotlib.patches import Patch, Polygon

    from service.core.machine_span import flagged_rows

    machine = payload["machine"]
    rotor_first = machine == "compressor"
    flagged = flagged_rows(machine, {name: check["status"] for name, check in body.get("checks", {}).items()
                                     if isinstance(check["status"], list)})
    with matplotlib.rc_context(_STYLE):
        figure = Figure(figsize=(9.0, 4.2), layout="constrained")
        axes = figure.add_subplot()
        x, hub, tip = body["flowpath_x"], body["flowpath_hub_radius"], body["flowpath_tip_radius"]
        axes.plot(x, hub, color="black", linewidth=1.2, label="hub")
        axes.plot(x, tip, color="black", linewidth=1.2, linestyle="--", label="tip")
        stations = body["station_axial_position"]
        axes.vlines(stations, body["station_hub_radius"], body["station_tip_radius"], colors="0.75",
                    linewidth=0.6, zorder=0)
        for j, count in enumerate(body["row_blade_count"]):
            rotor = (j % 2 == 0) == rotor_first
            kind, colour = ("R", ROTOR_COLOUR) if rotor else ("S", STATOR_COLOUR)
            le, te = body["row_leading_edge"][j], body["row_trailing_edge"][j]
            corners = [(le, hub[2 * j]), (le, tip[2 * j]), (te, tip[2 * j + 1]), (te, hub[2 * j + 1])]
            row = Polygon(corners, closed=True, facecolor=colour, edgecolor="black", linewidth=0.5, alpha=0.8)
            row.set_gid(f"row-{j + 1}")
            axes.add_patch(row)
            if j in flagged:
                status, ends = flagged[j]
                mark = Polygon(corners, closed=True, fill=False, edgecolor=_FLAG_COLOURS[status], linewidth=2.0,
                               hatch="///" if status == "fail" else None)
                mark.set_gid(f"row-{j + 1}-{status}")
                axes.add_patch(mark)
                axes.text(0.5 * (le + te), max(tip[2 * j], tip[2 * j + 1]), f"{status}: {' '.join(ends)}",
                          ha="center", va="bottom", fontsize=6, color=_FLAG_COLOURS[status])
            axes.text(0.5 * (le + te), 0.25 * (hub[2 * j] + tip[2 * j] + hub[2 * j + 1] + tip[2 * j + 1]),
                      f"{kind}{j // 2 + 1}\n{count}", ha="center", va="center", fontsize=7, color="white")
        axes.set_aspect("equal", adjustable="datalim")
        axes.set_xlabel("axial position x [m]")
        axes.set_ylabel("radius r [m]")
        axes.set_title(f"{machine.capitalize()} meridional flowpath: {body['stage_count']} stages, "
                       f"axial length {body['axial_length']:.3f} m (row labels: name and blade count)")
        axes.grid(True, linewidth=0.3)
        handles = [Patch(facecolor=ROTOR_COLOUR, label="rotor"), Patch(facecolor=STATOR_COLOUR, label="stator"),
                   *axes.get_lines(),
                   *(Patch(fill=False, edgecolor=_FLAG_COLOURS[status], linewidth=2.0,
                           hatch="///" if status == "fail" else None, label=f"hub or tip check: {status}")
                     for status in ("warn", "fail") if any(s == status for s, _ in flagged.values()))]
        axes.legend(handles=handles, loc="best", fontsize=8)
        return figure


def triangles_figure(payload: dict, body: dict):
    """The velocity triangles of a triangles result at the rotor's inlet and outlet.

    Parameters
    ----------
    payload : dict
        The request (one case): gives the machine.
    body : dict
        The triangles result of that case.

    Returns
    -------
    matplotlib.figure.Figure
        One panel per rotor station: tangential velocity [m/s] across (positive in
        the direction of rotor motion), axial velocity [m/s] down the page (the flow direction). The
        absolute velocity V, relative velocity W and blade speed U close each triangle; ids
        ``vector-V{k}``, ``vector-W{k}``, ``vector-U{k}`` for the rotor's stations ``k``. With hub
        and tip values in the answer their V and W are drawn thinner (hub dotted, tip dashed), ids
        ``vector-V{k}-hub``, ``vector-W{k}-tip``, ...
    """
    import matplotlib
    from matplotlib.figure import Figure

    machine = payload["machine"]
    stations = (1, 2) if machine == "compressor" else (2, 3)
    names = {1: "rotor inlet", 2: "rotor exit", 3: "rotor exit"} if machine == "compressor" else \
        {2: "rotor inlet (stator exit)", 3: "rotor exit"}
    with matplotlib.rc_context(_STYLE):
        spanwise = f"Vx{stations[0]}_hub" in body
        figure = Figure(figsize=(9.0, 4.6 if spanwise else 3.9), layout="constrained")
        panels = figure.subplots(1, 2)
        for axes, k in zip(panels, stations, strict=True):
            _mean_triangle(axes, body, k)
            for end, style in _SPAN_STYLES:
                if f"Vx{k}_{end}" in body:
                    _span_triangle(axes, body, k, end, style)
            axes.axhline(0.0, color="0.7", linewidth=0.5)
            axes.axvline(0.0, color="0.7", linewidth=0.5)
            axes.set_title(f"Station {k}: {names[k]}")
            axes.set_xlabel("tangential velocity [m/s] (+ in the direction of rotor motion)")
            axes.legend(loc="upper center", bbox_to_anchor=(0.5, -0.26 if spanwise else -0.2), fontsize=8,
                        frameon=False)
            axes.grid(True, linewidth=0.3)
        panels[0].set_ylabel("axial velocity [m/s] (flow downwards)")
        _set_limits(panels, body, stations)
        figure.suptitle(f"{machine.capitalize()} stage velocity triangles: phi = {body['flow_coefficient']:.3f}, "
                        f"psi = {body['loading_coefficient']:.3f}, R = {body['reaction']:.3f}")
        return figure


def _mean_triangle(axes, body: dict, k: int) -> None:
    """The mean-line V, W and U of station ``k``, each with its legend entry."""
    from matplotlib.patches import FancyArrowPatch

    vx, vt, wt = body[f"Vx{k}"], body[f"Vtheta{k}"], body[f"Wtheta{k}"]
    vectors = (
        (f"V{k}", (0.0, 0.0), (vt, -vx), "black", f"V{k} = {body[f'V{k}']:.0f} m/s, "
         f"alpha{k} = {body[f'alpha{k}']:.1f} deg"),
        (f"W{k}", (0.0, 0.0), (wt, -vx), ROTOR_COLOUR, f"W{k} = {body[f'W{k}']:.0f} m/s, "
         f"beta{k} = {body[f'beta{k}']:.1f} deg"),
        (f"U{k}", (wt, -vx), (vt, -vx), STATOR_COLOUR, f"U = {body['blade_speed']:.0f} m/s"),
    )
    for name, start, end, colour, label in vectors:
        arrow = FancyArrowPatch(start, end, arrowstyle="-|>", mutation_scale=12, color=colour,
                                linewidth=1.5, shrinkA=0, shrinkB=0)
        arrow.set_gid(f"vector-{name}")
        axes.add_patch(arrow)
        axes.plot([], [], color=colour, label=label)


def _span_triangle(axes, body: dict, k: int, end: str, style: str) -> None:
    """The V and W of station ``k`` at the span end ``end`` (hub or tip), thinner, in ``style``."""
    from matplotlib.patches import FancyArrowPatch

    evx, evt, ewt = body[f"Vx{k}_{end}"], body[f"Vtheta{k}_{end}"], body[f"Wtheta{k}_{end}"]
    for name, tip_point, colour in ((f"V{k}", (evt, -evx), "black"), (f"W{k}", (ewt, -evx), ROTOR_COLOUR)):
        arrow = FancyArrowPatch((0.0, 0.0), tip_point, arrowstyle="-|>", mutation_scale=8, color=colour,
                                linewidth=0.9, linestyle=style, alpha=0.7, shrinkA=0, shrinkB=0)
        arrow.set_gid(f"vector-{name}-{end}")
        axes.add_patch(arrow)
    axes.plot([], [], color="0.4", linestyle=style,
              label=f"{end}: alpha{k} = {body[f'alpha{k}_{end}']:.1f} deg, "
                    f"beta{k} = {body[f'beta{k}_{end}']:.1f} deg, U = {body[f'blade_speed_{end}']:.0f} m/s")


def _set_limits(panels, body: dict, stations: tuple[int, int]) -> None:
    """The same scales on both panels, wide enough for every drawn swirl and axial velocity."""
    suffixes = [""] + [f"_{end}" for end, _ in _SPAN_STYLES if f"Vx{stations[0]}_{end}" in body]
    swirls = [body[f"{c}theta{k}{s}"] for c in "VW" for k in stations for s in suffixes]
    extent = max(abs(v) for v in swirls)
    low, high = min(min(swirls), 0.0), max(max(swirls), 0.0)
    for axes in panels:
        axes.set_xlim(low - 0.1 * extent, high + 0.1 * extent)
        axes.set_ylim(-1.15 * max(body[f"Vx{k}{s}"] for k in stations for s in suffixes), 0.1 * extent)
        axes.set_aspect("equal", adjustable="box")

"""Reading charts as a user sees them: the Vega-Lite spec, the laid-out scene, the pixels.

* :func:`units`, :func:`by_mark`, :func:`values`, :func:`params` walk ``chart.to_dict()``;
* :func:`scene` lays the chart out with Vega (vl-convert's scenegraph) and returns the
  drawn items of each mark, in pixels: what is actually on the canvas (a bar with no
  width is visible here, not in the spec);
* :func:`render` draws the PNG and :func:`colour_share` measures how much of a region has
  a colour.
"""

from __future__ import annotations

import io
from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import vl_convert as vlc
from PIL import Image

from talkthemes.charts.style import OKABE_ITO

# --------------------------------------------------------------------------- the spec


def units(spec: dict[str, Any]) -> Iterator[dict[str, Any]]:
    """Every single-mark view in a (layered / concatenated) spec."""
    if "mark" in spec:
        yield spec
    for key in ("layer", "concat", "hconcat", "vconcat"):
        for child in spec.get(key, []):
            yield from units(child)


def mark(unit: dict[str, Any]) -> str:
    m = unit["mark"]
    return m if isinstance(m, str) else m["type"]


def by_mark(spec: dict[str, Any], kind: str) -> list[dict[str, Any]]:
    return [u for u in units(spec) if mark(u) == kind]


def values(spec: dict[str, Any], unit: dict[str, Any], parent: dict[str, Any] | None = None):
    data = unit.get("data") or (parent or {}).get("data")
    return spec["datasets"][data["name"]]


def params(spec: dict[str, Any]) -> dict[str, dict[str, Any]]:
    found: dict[str, dict[str, Any]] = {}

    def walk(node: dict[str, Any]) -> None:
        for p in node.get("params", []):
            found[p["name"]] = p
        for key in ("layer", "concat", "hconcat", "vconcat"):
            for child in node.get(key, []):
                walk(child)

    walk(spec)
    return found


def colours_in(spec: dict[str, Any]) -> set[str]:
    """Every colour a spec's data marks use: scale ranges, fixed values and conditions."""
    out: set[str] = set()
    for unit in units(spec):
        m = unit["mark"] if isinstance(unit["mark"], dict) else {}
        for key in ("color", "fill", "stroke"):
            if isinstance(m.get(key), str):
                out.add(m[key])
        for channel in ("color", "fill", "stroke"):
            enc = unit.get("encoding", {}).get(channel)
            if not enc:
                continue
            rng = enc.get("scale", {}).get("range") if isinstance(enc, dict) else None
            if isinstance(rng, list):
                out.update(rng)
            if isinstance(enc.get("value"), str):
                out.add(enc["value"])
            for cond in enc.get("condition", []) if isinstance(enc.get("condition"), list) else []:
                if isinstance(cond.get("value"), str):
                    out.add(cond["value"])
    return out


NEUTRALS = {"#ffffff", "#2b2b2b", "#6b6b6b", "#c8c8c8"}  # paper and ink, not data colours


def assert_palette(spec: dict[str, Any]) -> None:
    """Every data colour of the spec is one of Okabe & Ito's."""
    used = colours_in(spec) - NEUTRALS
    assert used, "no data colours found"
    assert used <= {c.upper() for c in OKABE_ITO} | set(OKABE_ITO), used


# --------------------------------------------------------------------------- the scene


@dataclass
class Scene:
    """A chart as Vega lays it out, in pixels of the PNG at scale 1.

    ``marks`` maps each mark's name to its type and drawn items; ``offsets`` gives, per
    mark name, the pixel position its items' ``x``/``y`` are relative to; ``groups`` maps
    each named group (a view of a concatenated chart) to its box ``(x0, y0, x1, y1)``.
    """

    width: int
    height: int
    marks: dict[str, tuple[str, list[dict[str, Any]]]] = field(default_factory=dict)
    offsets: dict[str, tuple[float, float]] = field(default_factory=dict)
    groups: dict[str, tuple[float, float, float, float]] = field(default_factory=dict)

    def of_type(self, marktype: str) -> list[tuple[str, list[dict[str, Any]]]]:
        """``(name, items)`` of every mark of a type (``"rect"``, ``"line"``…)."""
        return [(n, items) for n, (t, items) in self.marks.items() if t == marktype]


def scene(spec: dict[str, Any]) -> Scene:
    """Lay a spec out with Vega (vl-convert's scenegraph): what is actually drawn.

    A bar with no width, a line outside the plot or an empty mark shows here, not in the
    spec.
    """
    graph = vlc.vegalite_to_scenegraph(spec)
    out = Scene(int(graph["width"]), int(graph["height"]))

    def walk(node: dict[str, Any], ox: float, oy: float) -> None:
        if node.get("marktype") == "group":
            for item in node.get("items", []):
                gx, gy = ox + float(item.get("x") or 0), oy + float(item.get("y") or 0)
                if node.get("name") and item.get("width") is not None:
                    out.groups[node["name"]] = (
                        gx,
                        gy,
                        gx + float(item["width"]),
                        gy + float(item.get("height") or 0),
                    )
                for child in item.get("items", []):
                    walk(child, gx, gy)
        elif node.get("role") == "mark" and node.get("name"):
            name = node["name"]
            kind, items = out.marks.get(name, (node["marktype"], []))
            out.marks[name] = (kind, items + list(node.get("items", [])))
            out.offsets[name] = (ox, oy)

    ox, oy = graph["origin"]
    walk(graph["scenegraph"], float(ox), float(oy))
    return out


# --------------------------------------------------------------------------- pixels


def render(spec: dict[str, Any], scale: float = 1.0) -> np.ndarray:
    """The chart's PNG as an RGB array (height × width × 3)."""
    png = vlc.vegalite_to_png(spec, scale=scale)
    return decode(png)


def decode(png: bytes) -> np.ndarray:
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
    return np.asarray(Image.open(io.BytesIO(png)).convert("RGB"), dtype=np.int16)


def rgb(hex_colour: str, opacity: float = 1.0, paper: str = "#ffffff") -> np.ndarray:
    """A colour as drawn with ``opacity`` over ``paper``."""
    c = np.array([int(hex_colour[i : i + 2], 16) for i in (1, 3, 5)], dtype=float)
    p = np.array([int(paper[i : i + 2], 16) for i in (1, 3, 5)], dtype=float)
    return opacity * c + (1 - opacity) * p


def colour_share(region: np.ndarray, colour: np.ndarray, tol: float = 24.0) -> float:
    """Share of a region's pixels within ``tol`` (summed over channels) of ``colour``."""
    if region.size == 0:
        return 0.0
    return float((np.abs(region - colour).sum(axis=-1) <= tol).mean())


def not_paper_share(region: np.ndarray, paper: str = "#ffffff", tol: float = 24.0) -> float:
    """Share of a region's pixels that are not the background."""
    return 1.0 - colour_share(region, rgb(paper), tol)

"""Write shapes/mixer-paddle-shaft.dxf, the example DXF drawing.

Invented scenario: the 40 mm paddle shaft of a small batch mixer, keyed to
its gearbox with one parallel keyway 12 mm wide, 5.0 mm deep (measured from
the top of the shaft circle on the keyway centreline) with 0.4 mm floor
fillets (the 38-44 mm row of DIN 6885-1).  The section is drawn the way a
CAD user leaves it after trimming a circle and filleting the keyway: one ARC
for the shaft surface, LINEs for the keyway sides and floor, small ARCs for
the fillets, all on layer OUTLINE.  The drawing also holds centre lines
(layer CENTRE) and a title (layer NOTES), so it must be read with
``--layer OUTLINE``::

    soapfilm solve shapes/mixer-paddle-shaft.dxf --layer OUTLINE

Run ``python shapes/make_dxf_example.py`` to write the drawing again.
"""

from __future__ import annotations

import math
from pathlib import Path

import ezdxf

D = 40.0  # shaft diameter, mm
B = 12.0  # keyway width
T1 = 5.0  # keyway depth from the top of the shaft circle
R_FILLET = 0.4  # keyway floor fillet radius


def draw(msp) -> None:
    """Add the shaft section (keyway at the top) to a modelspace."""
    R, a = D / 2.0, B / 2.0
    floor = R - T1
    top = math.sqrt(R * R - a * a)  # where the keyway sides meet the circle
    r = R_FILLET
    outline = {"layer": "OUTLINE"}
    msp.add_arc((0, 0), R, math.degrees(math.atan2(top, -a)), math.degrees(math.atan2(top, a)),
                dxfattribs=outline)
    msp.add_line((a, top), (a, floor + r), dxfattribs=outline)
    msp.add_arc((a - r, floor + r), r, 270, 360, dxfattribs=outline)
    msp.add_line((a - r, floor), (-a + r, floor), dxfattribs=outline)
    msp.add_arc((-a + r, floor + r), r, 180, 270, dxfattribs=outline)
    msp.add_line((-a, floor + r), (-a, top), dxfattribs=outline)
    centre = {"layer": "CENTRE", "linetype": "CENTER"}
    msp.add_line((-R - 4, 0), (R + 4, 0), dxfattribs=centre)
    msp.add_line((0, -R - 4), (0, R + 4), dxfattribs=centre)
    msp.add_text("MIXER PADDLE SHAFT D40, KEYWAY 12 x 5.0, R0.4",
                 height=2.0, dxfattribs={"layer": "NOTES"}).set_placement((-R, -R - 8))


def main(path: Path | None = None) -> Path:
    path = path or Path(__file__).with_name("mixer-paddle-shaft.dxf")
    doc = ezdxf.new("R2010", setup=["linetypes"])
    doc.units = ezdxf.units.MM
    doc.layers.add("OUTLINE", color=7)
    doc.layers.add("CENTRE", color=1, linetype="CENTER")
    doc.layers.add("NOTES", color=3)
    draw(doc.modelspace())
    doc.saveas(path)
    return path


if __name__ == "__main__":
    print(main())

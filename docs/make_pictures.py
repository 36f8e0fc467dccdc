"""Draw the README's pictures from the service itself: ``python docs/make_pictures.py``.

The cases are invented examples (not check values). Each is sent to the running application's
endpoint with ``Accept: image/svg+xml``; a PNG of the same figure is written beside the SVG.
"""

from __future__ import annotations

from pathlib import Path

from service import create_app
from service.api import drawings

HERE = Path(__file__).parent

FLOWPATH = {"machine": "compressor", "mass_flow": 30.0, "total_temperature": 288.15, "total_pressure": 101325.0,
            "pressure_ratio": 6.0, "shaft_speed": 11000.0, "polytropic_efficiency": 0.9, "tip_radius": 0.33,
            "max_loading_coefficient": 0.38, "flow_coefficient": 0.5, "reaction": 0.6, "rotor_aspect_ratio": 2.5,
            "stator_aspect_ratio": 3.0, "target_diffusion_factor": 0.45}
TRIANGLES = {"machine": "compressor", "flow_coefficient": 0.5, "loading_coefficient": 0.4, "reaction": 0.6,
             "blade_speed": 300.0, "mean_radius": 0.3, "hub_to_tip_ratio": 0.7}


def main() -> None:
    client = create_app().test_client()
    for name, path, case, figure in (("flowpath", "/v1/machine-design", FLOWPATH, drawings.flowpath_figure),
                                     ("triangles", "/v1/triangles", TRIANGLES, drawings.triangles_figure)):
        svg = client.post(path, json=case, headers={"Accept": "image/svg+xml"})
        assert svg.status_code == 200, svg.get_data(as_text=True)
        (HERE / f"{name}.svg").write_bytes(svg.data)
        body = client.post(path, json=case).get_json()
        figure(case, body).savefig(HERE / f"{name}.png", dpi=100)
        print(f"wrote docs/{name}.svg and docs/{name}.png")


if __name__ == "__main__":
    main()

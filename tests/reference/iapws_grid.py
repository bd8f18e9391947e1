#!/usr/bin/env python3
"""Reference values for `tests/water_reference.rs`, from the PyPI package `iapws`.

`iapws` is an independent implementation of IAPWS-IF97 (IAPWS R7-97(2012)). This script
evaluates, over a grid of water temperatures 0.00-150 degC (0, 0.01 and every 5 degC) and
absolute pressures 0.01-10 MPa:
  - the saturation pressure p_s(T)            (region 4, iapws.iapws97._PSat_T),
  - the saturation temperature T_s(p)         (region 4, iapws.iapws97._TSat_P),
  - specific volume and density of the liquid (region 1, iapws.iapws97._Region1),
skipping (T, p) points whose pressure is below saturation (vapour, not liquid). It writes
tests/reference/iapws_grid.json in SI units (K, Pa, m3/kg, kg/m3) and records the iapws
version used.

Regenerate (from the repository root):
    python3 -m pip install iapws          # once; any recent version
    python3 tests/reference/iapws_grid.py
then run `cargo test --test water_reference` and commit both files.
"""

import json
import os
import sys

import iapws
from iapws import iapws97

TEMPERATURES_C = [0.0, 0.01] + [float(t) for t in range(5, 151, 5)]
PRESSURES_MPA = [0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1.0, 2.0, 5.0, 10.0]


def main():
    saturation_pressure = []
    for t_c in TEMPERATURES_C:
        t_k = t_c + 273.15
        saturation_pressure.append(
            {"temperature_k": t_k, "pressure_pa": iapws97._PSat_T(t_k) * 1e6}
        )

    saturation_temperature = []
    for p_mpa in PRESSURES_MPA:
        saturation_temperature.append(
            {"pressure_pa": p_mpa * 1e6, "temperature_k": iapws97._TSat_P(p_mpa)}
        )

    region1 = []
    skipped = 0
    for t_c in TEMPERATURES_C:
        t_k = t_c + 273.15
        p_sat_mpa = iapws97._PSat_T(t_k)
        for p_mpa in PRESSURES_MPA:
            if p_mpa < p_sat_mpa:
                skipped += 1
                continue
            v = iapws97._Region1(t_k, p_mpa)["v"]
            region1.append(
                {
                    "temperature_k": t_k,
                    "pressure_pa": p_mpa * 1e6,
                    "specific_volume_m3_per_kg": v,
                    "density_kg_per_m3": 1.0 / v,
                }
            )

    out = {
        "source": "PyPI package iapws (IAPWS-IF97, IAPWS R7-97(2012)), "
        "functions iapws.iapws97._PSat_T, _TSat_P, _Region1",
        "iapws_version": iapws.__version__,
        "generated_by": "tests/reference/iapws_grid.py",
        "units": {
            "temperature_k": "K",
            "pressure_pa": "Pa (absolute)",
            "specific_volume_m3_per_kg": "m3/kg",
            "density_kg_per_m3": "kg/m3",
        },
        "skipped_below_saturation": skipped,
        "saturation_pressure": saturation_pressure,
        "saturation_temperature": saturation_temperature,
        "region1": region1,
    }
    path = sys.argv[1] if len(sys.argv) > 1 else os.path.join(
        os.path.dirname(os.path.abspath(__file__)), "iapws_grid.json")
    with open(path, "w", encoding="utf-8") as f:
        json.dump(out, f, indent=1)
        f.write("\n")
    print(
        f"wrote {path}: {len(saturation_pressure)} p_s, {len(saturation_temperature)} T_s, "
        f"{len(region1)} region 1 points ({skipped} skipped below saturation), "
        f"iapws {iapws.__version__}"
    )


if __name__ == "__main__":
    main()

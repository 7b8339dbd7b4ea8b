#!/usr/bin/env python3
"""Write tests/fixtures/tmy3_723170_reference.csv: pvlib's reading of the bundled NSRDB TMY3 file.

The Rust TMY3 reader is checked hour by hour against this fixture (tests/weather_tmy3_reference.rs).
Installs pvlib==0.16.1 with pip if it is missing (it pulls pandas, numpy, scipy, h5py).

    python3 scripts/weather_reference.py          # from the repository root

The year is coerced to 2026 (pvlib's coerce_year; the last hour becomes 2027-01-01 00:00), the same year the
test asks the Rust reader for.
"""
import os
import subprocess
import sys

PVLIB = "0.16.1"
try:
    import pvlib
except ImportError:
    subprocess.check_call([sys.executable, "-m", "pip", "install", f"pvlib=={PVLIB}"])
    import pvlib

from pvlib.iotools import read_tmy3

print(f"pvlib {pvlib.__version__}")
root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
src = os.path.join(root, "weather-samples", "723170TYA.CSV")
out = os.path.join(root, "tests", "fixtures", "tmy3_723170_reference.csv")
data, meta = read_tmy3(src, coerce_year=2026, map_variables=False)
with open(out, "w", newline="\n") as f:
    f.write(f"# pvlib {pvlib.__version__} read_tmy3(coerce_year=2026, map_variables=False) of weather-samples/723170TYA.CSV\n")
    f.write("timestamp,DryBulb_C,RHum_pct,DewPoint_C,Pressure_mbar\n")
    for ts, row in data.iterrows():
        f.write(
            f"{ts.isoformat()},{row['Dry-bulb (C)']!r},{row['RHum (%)']!r},"
            f"{row['Dew-point (C)']!r},{row['Pressure (mbar)']!r}\n"
        )
print(f"wrote {len(data)} rows to {out}; site {meta['Name']} TZ {meta['TZ']} altitude {meta['altitude']} m")

"""Generate demo_data/cold_storage.csv: daily electricity use of four cold-storage sites.

Invented data for the demo only, with planted dependencies; never a reference for tests.
"""

from __future__ import annotations

import argparse
import csv
from pathlib import Path

import numpy as np

SEED = 20240917
START = np.datetime64("2023-10-02")
DAYS = 375
#: Kilograms in one avoirdupois pound, exact by definition (international yard and
#: pound agreement, 1959).
KG_PER_LB = 0.45359237

# Site name -> (base load kWh/day, mean pallets in per weekday, climate offset °C).
SITES = {
    "Northgate": (5200.0, 210.0, -2.5),
    "Quayside": (7800.0, 320.0, 1.0),
    "Ridgeway": (3900.0, 140.0, -0.5),
    "Millbrook": (6100.0, 250.0, 2.0),
}

# The response's true model; the demo README lists it so users can compare.
TRUE_EFFECTS = {
    "outdoor_temp_c": 96.0,
    "humidity_pct": 3.5,
    "sunshine_hours": 22.0,
    "goods_in_kg": 0.011,
    "pallets_in": 1.4,
    "pallets_out": 0.7,
    "door_openings": 5.2,
    "defrost_cycles": 48.0,
}
NOISE_SD = 420.0

COLUMNS = [
    "date", "site", "outdoor_temp_c", "outdoor_temp_f", "humidity_pct", "sunshine_hours",
    "goods_in_lb", "goods_in_kg", "pallets_in", "pallets_out", "pallets_moved",
    "door_openings", "defrost_cycles", "energy_kwh",
]


def simulate(seed: int = SEED) -> list[dict[str, object]]:
    """One row per site and day; missing values are None."""
    rng = np.random.default_rng(seed)
    days = START + np.arange(DAYS)
    doy = (days - np.datetime64("2023-01-01")).astype(int) % 365
    weekday = (days.astype("datetime64[D]").view("int64") - 4) % 7  # 0 = Monday
    season = -np.cos(2 * np.pi * (doy - 15) / 365)  # -1 in mid-January, +1 in mid-July
    rows: list[dict[str, object]] = []
    for site, (base, pallets_mean, offset) in SITES.items():
        # Weather: a shared seasonal swing plus a slowly wandering local anomaly.
        anomaly = np.zeros(DAYS)
        for t in range(1, DAYS):
            anomaly[t] = 0.7 * anomaly[t - 1] + rng.normal(0.0, 1.8)
        temp_c = np.round(10.5 + offset + 8.5 * season + anomaly, 1)
        humidity = np.clip(np.round(74 - 0.9 * (temp_c - 10) + rng.normal(0, 6, DAYS)), 30, 100)
        sunshine = np.clip(np.round(4.5 + 3.0 * season + rng.normal(0, 1.8, DAYS), 1), 0.0, 15.5)
        # Goods flow: quieter at weekends; outbound follows inbound with its own noise.
        busy = np.where(weekday >= 5, 0.6, 1.0) * (1 + 0.08 * season)
        pallets_in = rng.poisson(pallets_mean * busy * rng.lognormal(0.0, 0.22, DAYS))
        pallets_out = rng.poisson(pallets_mean * busy * rng.lognormal(0.0, 0.22, DAYS))
        pallets_moved = pallets_in + pallets_out
        # Dock doors open for most pallet movements, plus a few other reasons.
        door = np.round(0.42 * pallets_moved + rng.normal(0.0, 11.0, DAYS))
        # Scale tickets come in pounds; the average pallet weight varies with product mix.
        lb_per_pallet = rng.uniform(800.0, 1900.0, DAYS)
        goods_lb = np.round(pallets_in * lb_per_pallet)
        goods_kg = goods_lb * KG_PER_LB
        defrost = rng.poisson(1.5 + humidity / 40.0)
        mean = (base + TRUE_EFFECTS["outdoor_temp_c"] * temp_c
                + TRUE_EFFECTS["humidity_pct"] * humidity
                + TRUE_EFFECTS["sunshine_hours"] * sunshine
                + TRUE_EFFECTS["goods_in_kg"] * goods_kg
                + TRUE_EFFECTS["pallets_in"] * pallets_in
                + TRUE_EFFECTS["pallets_out"] * pallets_out
                + TRUE_EFFECTS["door_openings"] * door
                + TRUE_EFFECTS["defrost_cycles"] * defrost)
        energy = np.round(mean + rng.normal(0.0, NOISE_SD, DAYS), 1)
        for t in range(DAYS):
            rows.append({
                "date": str(days[t]),
                "site": site,
                "outdoor_temp_c": f"{temp_c[t]:.1f}",
                # 32 + 1.8·c with c on a 0.1 grid has at most two decimals: written exactly.
                "outdoor_temp_f": f"{32 + 1.8 * temp_c[t]:.2f}",
                "humidity_pct": f"{humidity[t]:.0f}",
                "sunshine_hours": f"{sunshine[t]:.1f}",
                "goods_in_lb": f"{goods_lb[t]:.0f}",
                # An integer times an 8-decimal factor: 8 decimals hold it exactly.
                "goods_in_kg": f"{goods_kg[t]:.8f}",
                "pallets_in": str(pallets_in[t]),
                "pallets_out": str(pallets_out[t]),
                "pallets_moved": str(pallets_moved[t]),
                "door_openings": f"{door[t]:.0f}",
                "defrost_cycles": str(defrost[t]),
                "energy_kwh": f"{energy[t]:.1f}",
            })
    # Sort by date, then site, as a site-network export would be.
    rows.sort(key=lambda r: (r["date"], r["site"]))
    _blank_out(rng, rows)
    return rows


def _blank_out(rng: np.random.Generator, rows: list[dict[str, object]]) -> None:
    """A humidity sensor outage, a door counter reset, and a few lost meter reads."""
    n = len(rows)
    for column, count in (("humidity_pct", 7), ("door_openings", 5), ("energy_kwh", 3)):
        for i in rng.choice(n, size=count, replace=False):
            rows[int(i)][column] = None


def write(path: Path, rows: list[dict[str, object]]) -> None:
    with path.open("w", newline="", encoding="utf-8") as fh:
        out = csv.DictWriter(fh, fieldnames=COLUMNS, lineterminator="\n")
        out.writeheader()
        for row in rows:
            out.writerow({k: ("" if v is None else v) for k, v in row.items()})


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Write the cold-storage demo table.")
    parser.add_argument("--out", default=str(Path(__file__).with_name("cold_storage.csv")))
    parser.add_argument("--seed", type=int, default=SEED)
    args = parser.parse_args(argv)
    write(Path(args.out), simulate(args.seed))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())

"""An invented river monitoring station's log: the long sheet of the long-sheet benchmark.

One reading every 30 seconds (1,048,576 rows are about 364 days) of ten channels that
follow a daily and a yearly cycle and two slow weather drivers (random walks that forget
over about six hours), each with 5 % measurement noise. Such logs have few degrees of
freedom although they have many columns, unlike independent normal columns, on which
any exact neighbour search must look at a large share of the rows.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from scipy.signal import lfilter

#: Seconds between readings.
STEP = 30.0
#: How long (seconds) the weather drivers remember.
MEMORY = 6 * 3600.0
COLUMNS = [
    "air_temp_c",
    "water_temp_c",
    "oxygen_mg_l",
    "conductivity_us_cm",
    "ph",
    "turbidity_ntu",
    "humidity_pct",
    "pressure_hpa",
    "flow_m3_s",
    "stage_m",
]


def station_log(rows: int, gap: float = 0.05, seed: int = 0) -> pd.DataFrame:
    """The station's log with ``gap`` of its cells blank at random (missing completely at random).

    Parameters
    ----------
    rows : int
        Readings (30 s apart).
    gap : float
        Share of blank cells.
    seed : int
        Seed of numpy's default generator.

    Returns
    -------
    DataFrame
        One column per channel of :data:`COLUMNS`.
    """
    rng = np.random.default_rng(seed)
    days = np.arange(rows) * STEP / 86_400
    day, year = 2 * np.pi * days, 2 * np.pi * days / 365.25
    keep = np.exp(-STEP / MEMORY)  # AR(1) drivers with unit variance
    weather = lfilter([np.sqrt(1 - keep * keep)], [1, -keep], rng.normal(size=(rows, 2)), axis=0)
    wet, calm = weather[:, 0], weather[:, 1]
    air = 10 - 8 * np.cos(year) + 5 * np.sin(day - 1) + 3 * wet
    water = 11 - 6 * np.cos(year - 0.3) + np.sin(day - 1.8) + 0.8 * wet
    flow = np.exp(2 + 0.5 * calm - 0.3 * np.cos(year))
    values = np.column_stack(
        [
            air,
            water,
            14.6 - 0.39 * water + 0.8 * np.sin(day - 1.5) + 0.4 * calm,
            400 + 60 * calm - 20 * np.cos(year),
            7.6 + 0.25 * np.sin(day - 1.5) + 0.1 * calm,
            np.exp(1 + 0.6 * calm + 0.2 * rng.normal(size=rows)),
            70 - 15 * np.sin(day - 1) + 10 * wet,
            1013 + 8 * wet - 4 * calm,
            flow,
            0.8 + 0.3 * np.log(flow),
        ]
    )
    values += rng.normal(size=values.shape) * values.std(axis=0) * 0.05
    values[rng.random(values.shape) < gap] = np.nan
    return pd.DataFrame(values, columns=COLUMNS)

"""Write the fit demo's fit-demo-observed.csv (shipped beside the fit-demo scenario): the INVENTED observed record of the fit demo.

One womlab run of the fit-demo scenario with market.organisations = 2400,
adoption.external = 0.004 and adoption.word_of_mouth = 0.55 (spawn key (7,)), new customers
in quarters 1..20, quarter 9 left out as if its figure had been lost. No real data.

    python experiments/calibration/make_demo_series.py
"""

from __future__ import annotations

from pathlib import Path

import womlab

ROOT = Path(__file__).resolve().parents[2]
TRUTH = {"market.organisations": 2400, "adoption.external": 0.004, "adoption.word_of_mouth": 0.55}


def main() -> None:
    scenario = womlab.load_scenario(ROOT / "src" / "womlab" / "scenario" / "demos" / "fit-demo.toml").replace(TRUTH)
    series = womlab.simulated_series(scenario, periods=20, kind="new_customers", key=(7,), drop=[9])
    out = ROOT / "src" / "womlab" / "scenario" / "demos" / "fit-demo-observed.csv"
    series.to_frame()[["period", "new_customers"]].to_csv(out, index=False)
    print(f"wrote {out.relative_to(ROOT)}: {len(series)} quarters, {int(series.counts.sum())} new customers")


if __name__ == "__main__":
    main()

"""Time predict (service, in process) on the demo with and without an endurance figure, median of N calls each.

Usage: python benchmarks/predict.py [--n 30]
Loads the invented demo into a throwaway SQLite file, predicts the quad's 4S 5200 mAh × 30 A ESC × 3508-460 ×
13x4.4 system at full throttle and at hover thrust, then the same with a constant-thrust endurance; prints both
medians and the ratio (the endurance figure's cost relative to the plain prediction, in the same run) and ends with
`predict: with endurance X ms median, Y× the plain prediction`.
"""

from __future__ import annotations

import argparse
import statistics
import time

from sqlalchemy import select

from server.models import PART_MODELS
from server.schemas.predict import PredictRequest
from server.services import predict, seed

SYSTEM = {"batteries": "NS-B4S-5200", "escs": "NS-E30", "motors": "NS-M3508-460", "propellers": "NS-P13x4.4"}


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--n", type=int, default=30)
    args = parser.parse_args()
    with seed.throwaway_demo() as factory:
        with factory() as session:
            ids = {kind: session.scalars(select(PART_MODELS[kind].id).where(
                PART_MODELS[kind].part_number == number)).one() for kind, number in SYSTEM.items()}
            team_id = session.scalars(select(PART_MODELS["batteries"].team_id)).first()
            body = {"battery": {"id": ids["batteries"]}, "esc": {"id": ids["escs"]}, "motor": {"id": ids["motors"]},
                    "propeller": {"id": ids["propellers"]}, "rotor_count": 4,
                    "points": [{"throttle": 1.0}, {"thrust_n": 5.9}]}
            medians = {}
            for label, extra in (("plain", {}), ("with endurance", {"endurance": {"thrust_n": 5.9}})):
                request = PredictRequest.model_validate(body | extra)
                predict.predict(session, team_id, request)  # warm up
                times = []
                for _ in range(args.n):
                    start = time.perf_counter()
                    predict.predict(session, team_id, request)
                    times.append(time.perf_counter() - start)
                medians[label] = statistics.median(times) * 1000
                print(f"{label}: {medians[label]:.1f} ms median of {args.n}")
    ratio = medians["with endurance"] / medians["plain"]
    print(f"predict: with endurance {medians['with endurance']:.1f} ms median, {ratio:.2f}× the plain prediction")


if __name__ == "__main__":
    main()

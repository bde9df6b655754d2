"""Placeholder demo: one simulated round through the solver, printed as a short transcript.

Replaced by the chat sandbox demo once the bot exists. The flat, its rooms and its people are
invented for this demo.
"""

from __future__ import annotations

import argparse
from collections.abc import Sequence

from solver.money import format_minor
from solver.problem import Problem
from solver.simulate import MODELS, random_tenants, run

ROOMS = ("Bay window", "Loft", "Courtyard", "Box room", "Attic", "Garden room")
FLATMATES = ("Ines", "Tomasz", "Aroha", "Kwame", "Lidia", "Sven")
RENT = 2_480_00


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Run one simulated Flatpact round.")
    parser.add_argument("--rooms", type=int, default=4, choices=range(2, 7))
    parser.add_argument("--seed", type=int, default=7)
    parser.add_argument("--model", choices=MODELS, default="quasi-linear")
    parser.add_argument("--tolerance", type=int, default=100, help="minor units (100 = 1.00)")
    args = parser.parse_args(argv)
    problem = Problem(
        rent=RENT,
        rooms=ROOMS[: args.rooms],
        members=FLATMATES[: args.rooms],
        tolerance=args.tolerance,
    )
    tenants = random_tenants(problem, args.model, args.seed)
    result = run(problem, tenants)
    print(f"Flat at 12 Quince Row, rent {format_minor(RENT)} a month, {args.rooms} rooms.")
    print("Suggested division (a suggestion, not legal or financial advice; the lease and")
    print("local tenancy law come first):")
    for member, room in result.proposal.assignment.items():
        price = format_minor(result.proposal.prices[room])
        envy = format_minor(round(result.envy[member]))
        asked = result.questions_per_member[member]
        print(f"  {member:8} {problem.rooms[room]:12} {price:>9}   envy {envy:>6}   asked {asked}")
    print(f"  total    {format_minor(sum(result.proposal.prices)):>22}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())

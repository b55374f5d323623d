#!/usr/bin/env python3
"""Generates the demo's plans: entities/plans/budget/ and entities/plans/forecast-q3/ (docs/demo.md, Plans).

Reads the demo's deliveries (entities/, rates/, as docs/demo/make_demo.py writes them) and
writes each plan in the format of docs/formats.md (Plans): one movements file per entity in
its local accounts and currency, and the plan's rates. Every figure is invented:

- The budget was set before the year: revenue from external customers 6% above what came
  in (BRW-MX 4% below: it beat its budget), costs of sales, staff and other operating
  expenses 3% above, tax 5% above; intercompany lines (with a counterparty), interest and
  depreciation as they came in; exchange gains and losses and dividends not budgeted.
  GLF-BH, acquired in April, is not in the budget (a scope difference). NRD-SE, sold on
  2026-10-01, is: the budget expected its October to December like its September (its
  last month delivered), and ALD-NL's fees from it likewise. The budget rates
  are the closing rates of 2025-12 for every month, closing and average (a fixed budget
  rate; common practice).
- The forecast made after June (forecast-q3): January to June as delivered, at the actual
  rates; July to December the budget's figures (GLF-BH at its delivered figures from
  April, as it is now in the group) at the June closing rate.

Python 3.11 standard library only; every amount is a decimal.Decimal; deterministic.
"""

from __future__ import annotations

import argparse
import csv
import os
import sys
from collections import defaultdict
from decimal import ROUND_HALF_UP, Decimal

D = Decimal
MINOR_UNIT = {"EUR": 2, "GBP": 2, "USD": 2, "MXN": 2, "JPY": 0, "BHD": 3, "SEK": 2,
              "CHF": 2, "PLN": 2}
PERIODS = [f"2026-{m:02d}" for m in range(1, 13)]
NOT_BUDGETED_ENTITIES = {"GLF-BH"}
# Group account -> budget factor (accounts not listed are budgeted as they came in).
FACTORS = {"4000": D("1.06"), "5000": D("1.03"), "6000": D("1.03"), "6200": D("1.03"),
           "8000": D("1.05")}
ENTITY_REVENUE = {"BRW-MX": D("0.96")}
# Not planned: exchange differences, dividends, intercompany differences, gains on
# disposal of subsidiaries.
NOT_PLANNED = {"7300", "7350", "7400", "6950", "7500"}


def read(path):
    with open(path, newline="", encoding="utf-8") as f:
        return list(csv.DictReader(f))


def q(x: Decimal, ccy: str) -> Decimal:
    return x.quantize(D(1).scaleb(-MINOR_UNIT[ccy]), rounding=ROUND_HALF_UP)


def pl_movements(root, entity, pl_accounts):
    """(period, local account, counterparty) -> movement of the entity's P&L accounts,
    balances deliveries turned into movements (a P&L balance starts the year at zero)."""
    ent = os.path.join(root, "entities", entity)
    mapping = {r["local_account"]: r["group_account"] for r in read(os.path.join(ent, "mapping.csv"))}
    out = {}
    cumulative = defaultdict(Decimal)
    for p in PERIODS:
        mov = os.path.join(ent, f"tb-{p}.movements.csv")
        bal = os.path.join(ent, f"tb-{p}.balances.csv")
        if not os.path.exists(mov) and not os.path.exists(bal):
            break  # sold: nothing delivered after its last month consolidated
        month = defaultdict(Decimal)
        if os.path.exists(mov):
            for r in read(mov):
                if mapping[r["account"]] in pl_accounts:
                    month[(r["account"], r["counterparty"])] += D(r["amount"])
        else:
            seen = defaultdict(Decimal)
            for r in read(bal):
                if mapping[r["account"]] in pl_accounts:
                    seen[(r["account"], r["counterparty"])] += D(r["amount"])
            for k in set(seen) | set(cumulative):
                month[k] = seen[k] - cumulative[k]
        for k, v in month.items():
            cumulative[k] += v
            if v != 0:
                out[(p, k[0], k[1])] = v
    return mapping, out


def write(path, header, rows, written):
    os.makedirs(os.path.dirname(path), exist_ok=True)
    with open(path, "w", newline="", encoding="utf-8") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(header)
        w.writerows(rows)
    written.append(path)


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    here = os.path.dirname(os.path.abspath(__file__))
    ap.add_argument("--root", default=os.path.normpath(os.path.join(here, "..", "..")),
                    help="the data folder holding entities/ and rates/ (default: repository root)")
    args = ap.parse_args(argv)
    root = args.root
    accounts = read(os.path.join(root, "entities", "accounts.csv"))
    pl_accounts = {a["account"] for a in accounts if a["statement"] == "profit_or_loss"} - NOT_PLANNED
    entities = {r["entity"]: r["currency"] for r in read(os.path.join(root, "entities", "entities.csv"))}
    rates = read(os.path.join(root, "rates", "monthly.csv"))
    by = {(r["period"], r["currency"]): r for r in rates}
    currencies = sorted({r["currency"] for r in rates})
    written = []
    header = ["period", "account", "amount", "counterparty"]
    # Entities sold in the year (every holding of them ends, the last in the year): the
    # last month they deliver.
    ends = defaultdict(list)
    for h in read(os.path.join(root, "entities", "holdings.csv")):
        ends[h["owned"]].append(h["valid_to"])
    sold = {o: max(v)[:7] for o, v in ends.items() if all(v) and max(v)[:7] in PERIODS}
    for e, ccy in sorted(entities.items()):
        mapping, moves = pl_movements(root, e, pl_accounts)
        # The plans were made before the sale: a sold entity's months after its last one,
        # and the other entities' lines naming it, are planned like that last month.
        for s, last in sold.items():
            for (p, loc, cp), v in sorted(moves.items()):
                if p == last and (e == s or cp == s):
                    for later in PERIODS[PERIODS.index(last) + 1:]:
                        moves[(later, loc, cp)] = moves.get((later, loc, cp), D(0)) + v
        budget, forecast = [], []
        for (p, loc, cp), v in sorted(moves.items()):
            grp = mapping[loc]
            factor = D(1) if cp else FACTORS.get(grp, D(1))
            if grp == "4000" and e in ENTITY_REVENUE:
                factor = ENTITY_REVENUE[e]
            b = q(v * factor, ccy)
            if e not in NOT_BUDGETED_ENTITIES and b != 0:
                budget.append([p, loc, str(b), cp])
            actual_month = p <= "2026-06" or e in NOT_BUDGETED_ENTITIES
            fv = v if actual_month else b
            if fv != 0:
                forecast.append([p, loc, str(fv), cp])
        if budget:
            write(os.path.join(root, "entities", "plans", "budget", f"{e}.csv"), header, budget, written)
        write(os.path.join(root, "entities", "plans", "forecast-q3", f"{e}.csv"), header, forecast, written)
    rate_header = ["period", "currency", "closing", "average", "quote", "source"]
    budget_rates, forecast_rates = [], []
    for p in PERIODS:
        for c in currencies:
            fixed = by[("2025-12", c)]["closing"]
            budget_rates.append([p, c, fixed, fixed, "units_per_presentation", "budget rate: closing 2025-12 (invented)"])
            if p <= "2026-06":
                r = by[(p, c)]
                forecast_rates.append([p, c, r["closing"], r["average"], "units_per_presentation", "actual rate"])
            else:
                june = by[("2026-06", c)]["closing"]
                forecast_rates.append([p, c, june, june, "units_per_presentation", "forecast rate: closing 2026-06"])
    write(os.path.join(root, "entities", "plans", "budget", "rates.csv"), rate_header, budget_rates, written)
    write(os.path.join(root, "entities", "plans", "forecast-q3", "rates.csv"), rate_header, forecast_rates, written)
    print(f"wrote {len(written)} files under {os.path.join(root, 'entities', 'plans')}")
    return 0


if __name__ == "__main__":
    sys.exit(main())

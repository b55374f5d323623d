#!/usr/bin/env python3
"""Independent check of the demo data written by make_demo.py.

Reads only the files under entities/ and rates/ (never the generator) and checks, row by
row, the rules of docs/formats.md that the demo must keep, plus the intercompany story of
docs/demo.md: every pair agrees except the documented deliberate differences.

Usage: python3 docs/demo/verify_demo.py [--data DIR] [--summary]
Exit code 0 when every check passes; otherwise every failure is listed and the code is 1.
Standard library only; amounts are decimal.Decimal.
"""

from __future__ import annotations

import argparse
import calendar
import csv
import os
import re
import sys
import tomllib
from decimal import ROUND_HALF_UP, Decimal

D = Decimal
MINOR = {"EUR": 2, "GBP": 2, "USD": 2, "MXN": 2, "JPY": 0, "BHD": 3, "SEK": 2, "CHF": 2, "PLN": 2}
AMOUNT_RE = re.compile(r"^-?[0-9]+(\.[0-9]+)?$")
PERIODS = [f"2026-{m:02d}" for m in range(1, 13)]
OPENING = "2025-12"
NOISE_EUR = D("0.50")  # rounding noise allowed between translated sides of a pair

# The deliberate differences of docs/demo.md.
# In the transaction currency: (period, entity pair sorted, kind, side, currency) -> |difference|
EXPECTED_TXN = {
    ("2026-06", ("BRW-MX", "BRW-US"), "trade", "bs", "USD"): D("38500.00"),
    ("2026-06", ("BRW-MX", "BRW-US"), "sales", "pl", "USD"): D("38500.00"),
    ("2026-12", ("ALD-UK", "BRW-US"), "trade", "bs", "USD"): D("96800.00"),
    ("2026-12", ("ALD-UK", "BRW-US"), "sales", "pl", "USD"): D("96800.00"),
    ("2026-12", ("BRW-US", "KIS-JP"), "trade", "bs", "USD"): D("3500.00"),
    ("2026-12", ("BRW-US", "KIS-JP"), "sales", "pl", "USD"): D("3500.00"),
    ("2026-09", ("ALD-NL", "NRD-SE"), "trade", "bs", "EUR"): D("9.60"),
    ("2026-09", ("ALD-NL", "NRD-SE"), "fees", "pl", "EUR"): D("9.60"),
}
# Agreeing in the transaction currency, differing once translated (FX differences).
EXPECTED_FX_ONLY = {
    ("2026-08", ("ALD-NL", "ALD-US"), "loan", "bs"),
    ("2026-08", ("ALD-NL", "ALD-US"), "trade", "bs"),
    # the June invoice booked by BRW-MX in July: same USD, translated at another month's rate
    *{(p, ("BRW-MX", "BRW-US"), "sales", "pl") for p in PERIODS[6:]},
    ("2026-12", ("ALD-NL", "ALD-UK"), "trade", "bs"),
    ("2026-12", ("ALD-NL", "ALD-UK"), "fees", "pl"),
}

failures: list[str] = []


def fail(msg: str) -> None:
    failures.append(msg)


def read_csv(path: str) -> list[dict]:
    with open(path, encoding="utf-8", newline="") as fh:
        rows = list(csv.DictReader(fh))
    return [{k: (v or "").strip() for k, v in r.items()} for r in rows]


def amount(text: str, ccy: str, where: str) -> Decimal:
    if not AMOUNT_RE.match(text):
        fail(f"{where}: amount {text!r} is not a plain decimal")
        return D(0)
    value = D(text)
    decimals = len(text.split(".")[1]) if "." in text else 0
    if decimals > MINOR[ccy] and value != value.quantize(D(1).scaleb(-MINOR[ccy])):
        fail(f"{where}: {text} has more decimals than {ccy} allows ({MINOR[ccy]})")
    if decimals != MINOR[ccy]:
        fail(f"{where}: {text} is not written with exactly {MINOR[ccy]} decimals (demo convention)")
    if abs(value) >= D(10) ** 15:
        fail(f"{where}: {text} is too large")
    return value


def check_prior_year(e, folder, opening_2026, gmap, accounts, parse) -> None:
    """The prior year 2025: its opening plus its twelve months, profit or loss closed into
    retained earnings, must be the 2026 opening, local account by local account."""
    rows = parse(os.path.join(folder, "opening.csv"), False)
    for m in range(1, 13):
        path = os.path.join(folder, f"tb-2025-{m:02d}.movements.csv")
        if not os.path.exists(path):
            fail(f"{e}: no delivery for 2025-{m:02d}")
            return
        rows += [(OPENING, *x[1:]) for x in parse(path, False)]
    closing: dict = {}
    result = D(0)
    for x in rows:
        if accounts[x[2]]["statement"] != "balance_sheet":
            result += x[5]
            continue
        k = (x[1], x[3])
        closing[k] = closing.get(k, D(0)) + x[5]
    retained = min(loc for loc, g in gmap.items() if g == "3200")
    closing[(retained, "")] = closing.get((retained, ""), D(0)) + result
    given: dict = {}
    for x in opening_2026:
        given[(x[1], x[3])] = given.get((x[1], x[3]), D(0)) + x[5]
    for k in set(closing) | set(given):
        if closing.get(k, D(0)) != given.get(k, D(0)):
            fail(f"{e}: 2026 opening {k} is {given.get(k, D(0))}, the 2025 closing {closing.get(k, D(0))}")


def main(argv=None) -> int:
    ap = argparse.ArgumentParser()
    here = os.path.dirname(os.path.abspath(__file__))
    ap.add_argument("--data", default=os.path.normpath(os.path.join(here, "..", "..")))
    ap.add_argument("--summary", action="store_true", help="print entity figures and all IC differences")
    args = ap.parse_args(argv)
    ent_dir = os.path.join(args.data, "entities")
    rates_dir = os.path.join(args.data, "rates")

    # ---- settings and master data ------------------------------------------------------
    with open(os.path.join(ent_dir, "group.toml"), "rb") as fh:
        settings = tomllib.load(fh)
    entities = {r["entity"]: r for r in read_csv(os.path.join(ent_dir, "entities.csv"))}
    accounts = {r["account"]: r for r in read_csv(os.path.join(ent_dir, "accounts.csv"))}
    holdings = read_csv(os.path.join(ent_dir, "holdings.csv"))
    layouts = read_csv(os.path.join(ent_dir, "layouts.csv"))
    ccy_of = {e: r["currency"] for e, r in entities.items()}

    if settings["parent"] not in entities:
        fail("parent is not an entity")
    for role, acc in settings["accounts"].items():
        if acc not in accounts:
            fail(f"role account {role} = {acc} is not in the chart")
    if len(set(ccy_of.values())) < 8 or len(entities) < 10:
        fail("fewer than 10 entities or 8 currencies")

    allowed = {("balance_sheet", "asset", "closing"), ("balance_sheet", "liability", "closing"),
               ("balance_sheet", "equity", "historical")}
    for st in ("profit_or_loss", "oci"):
        allowed |= {(st, "income", "average"), (st, "expense", "average")}
    for a, r in accounts.items():
        if (r["statement"], r["class"], r["basis"]) not in allowed:
            fail(f"account {a}: invalid combination {r['statement']}/{r['class']}/{r['basis']}")
        if not re.fullmatch(r"[0-9]{4}", a):
            fail(f"account {a} is not a 4-digit id")
    role_checks = {"retained_earnings": "historical", "translation_reserve": "historical",
                   "non_controlling_interest": "historical"}
    for role, basis in role_checks.items():
        if accounts[settings["accounts"][role]]["basis"] != basis:
            fail(f"role {role} is not {basis}")

    # layouts: every account of a statement's kind collected exactly once per statement
    def expand(spec: str) -> set[str]:
        out = set()
        for tok in spec.split():
            if ".." in tok:
                lo, hi = tok.split("..")
                out |= {a for a in accounts if len(a) == len(lo) and lo <= a <= hi}
            else:
                out.add(tok)
        return out

    kind = {"profit_or_loss": lambda r: r["statement"] == "profit_or_loss",
            "oci": lambda r: r["statement"] == "oci",
            "balance_sheet": lambda r: r["statement"] == "balance_sheet",
            "equity_changes": lambda r: r["statement"] == "balance_sheet" and r["class"] == "equity"}
    for st, pred in kind.items():
        lines = [r for r in layouts if r["statement"] == st]
        ids = [r["line"] for r in lines]
        if len(ids) != len(set(ids)) or not lines:
            fail(f"layout {st}: missing or duplicated line ids")
        count: dict[str, int] = {}
        for r in lines:
            if bool(r["accounts"]) == bool(r["total_of"]):
                fail(f"layout {st}/{r['line']}: needs exactly one of accounts and total_of")
            for a in expand(r["accounts"]):
                if a not in accounts or not pred(accounts[a]):
                    fail(f"layout {st}/{r['line']}: {a} is not an account of this statement")
                count[a] = count.get(a, 0) + 1
            # A ratio line (`A / B`, docs/formats.md) names two earlier lines.
            for t in r["total_of"].replace(" / ", " ").split():
                if t.lstrip("-") not in ids[: ids.index(r["line"])]:
                    fail(f"layout {st}/{r['line']}: total of unknown or later line {t}")
        for a, r in accounts.items():
            if pred(r) and count.get(a, 0) != 1:
                fail(f"layout {st}: account {a} collected {count.get(a, 0)} times")

    # ---- rates ---------------------------------------------------------------------------
    monthly = read_csv(os.path.join(rates_dir, "monthly.csv"))
    rates: dict[tuple[str, str], dict] = {}
    for i, r in enumerate(monthly, start=2):
        if r["quote"] != "units_per_presentation":
            fail(f"monthly.csv:{i}: unexpected quote")
        for col in ("closing", "average", "average_ytd"):
            if r[col]:
                if D(r[col]) <= 0 or len(r[col].split(".")[-1]) > 6:
                    fail(f"monthly.csv:{i}: {col} {r[col]} not positive or more than 6 decimals")
        rates[(r["period"], r["currency"])] = {k: D(r[k]) if r[k] else None
                                               for k in ("closing", "average", "average_ytd")}
    foreign = sorted({c for c in ccy_of.values() if c != settings["presentation_currency"]})
    for c in foreign:
        acc_avg = []
        for p in [OPENING] + PERIODS:
            if (p, c) not in rates:
                fail(f"rate missing for {c} {p}")
                continue
            if p != OPENING:
                acc_avg.append(rates[(p, c)]["average"])
                mean = sum(acc_avg) / len(acc_avg)
                if abs(mean - rates[(p, c)]["average_ytd"]) > D("0.0000005"):
                    fail(f"average_ytd {c} {p} is not the mean of the monthly averages")

    def r_of(ccy, period, kind_):
        return D(1) if ccy == "EUR" else rates[(period, ccy)][kind_]

    historical = {(r["entity"], r["account"], r["period"]) for r in read_csv(os.path.join(rates_dir, "historical.csv"))}

    # ---- entity files ----------------------------------------------------------------------
    owned_by = {(h["owner"], h["owned"]) for h in holdings}
    # An entity sold in the year (its holding ends in it, ownership_changes.csv says so)
    # delivers to the month end its holding ends in, and nothing after; from then its
    # pairs with the group are with a third party and are not compared.
    changes = read_csv(os.path.join(ent_dir, "ownership_changes.csv"))
    last_month: dict[str, str] = {}
    for h in holdings:
        if h["valid_to"] and h["valid_to"][:7] in PERIODS:
            y, m, d = (int(x) for x in h["valid_to"].split("-"))
            nxt = f"{y}-{m + 1:02d}-01" if d == calendar.monthrange(y, m)[1] and m < 12 else None
            if not any(c["owned"] == h["owned"] and c["holder"] == h["owner"] and c["date"] == nxt for c in changes):
                fail(f"holding {h['owner']}->{h['owned']} ends on {h['valid_to']} without a row in ownership_changes.csv")
    for owned in {h["owned"] for h in holdings}:
        ends = [h["valid_to"] for h in holdings if h["owned"] == owned]
        if all(ends) and max(ends)[:7] in PERIODS:
            last_month[owned] = max(ends)[:7]  # sold: every holding of it ends in the year

    def periods_of(e: str) -> list[str]:
        return [p for p in PERIODS if p <= last_month.get(e, PERIODS[-1])]
    # pos[entity][period][(group account, cp, ccy_of_compare)] = [functional, txn]
    bal: dict[str, dict[str, dict]] = {}   # cumulative BS / YTD P&L, functional + txn
    mov: dict[str, dict[str, dict]] = {}
    gmap: dict[str, dict[str, str]] = {}
    for e, er in entities.items():
        ccy = er["currency"]
        folder = os.path.join(ent_dir, e)
        mp = read_csv(os.path.join(folder, "mapping.csv"))
        locals_ = [r["local_account"] for r in mp]
        if len(locals_) != len(set(locals_)):
            fail(f"{e}: local account mapped twice")
        gmap[e] = {r["local_account"]: r["group_account"] for r in mp}
        for loc, g in gmap[e].items():
            if g not in accounts:
                fail(f"{e}: {loc} maps to unknown group account {g}")
        files = sorted(os.listdir(folder))
        kinds = {f.split(".")[1] for f in files if f.startswith("tb-2026")}
        if len(kinds) != 1:
            fail(f"{e}: mixes movements and balances deliveries")
        used: set[str] = set()

        def parse(path, with_period):
            rows = read_csv(path)
            out = []
            total = D(0)
            for i, r in enumerate(rows, start=2):
                where = f"{e}/{os.path.basename(path)}:{i}"
                loc = r["account"]
                used.add(loc)
                a = amount(r["amount"], ccy, where)
                total += a
                if loc not in gmap[e]:
                    fail(f"{where}: local account {loc} is not mapped")
                    continue
                g = gmap[e][loc]
                cp, tccy = r.get("counterparty", ""), r.get("txn_currency", "")
                t = amount(r["txn_amount"], tccy, where) if tccy else None
                if bool(tccy) != bool(r.get("txn_amount", "")):
                    fail(f"{where}: txn_currency and txn_amount go together")
                if tccy == ccy:
                    fail(f"{where}: txn_currency equals the functional currency")
                if accounts[g]["ic_kind"]:
                    if cp not in entities or cp == e:
                        fail(f"{where}: intercompany line with counterparty {cp!r}")
                elif cp:
                    fail(f"{where}: counterparty on a non-intercompany account")
                if g in ("1200",) and (e, cp) not in owned_by:
                    fail(f"{where}: investment in {cp} but no holding {e}->{cp}")
                if with_period and r["period"] not in PERIODS:
                    fail(f"{where}: period outside the fiscal year")
                if not with_period:
                    ap_ = r.get("amount_presentation", "")
                    if accounts[g]["basis"] == "historical":
                        if not ap_:
                            fail(f"{where}: historical row without amount_presentation")
                        else:
                            amount(ap_, "EUR", where)
                    elif ap_:
                        fail(f"{where}: amount_presentation on a {accounts[g]['basis']} row")
                out.append((r.get("period", OPENING), loc, g, cp, tccy, a, t or D(0)))
            if total != 0:
                fail(f"{e}/{os.path.basename(path)}: rows sum to {total}, not zero")
            return out

        # The 2026 opening: delivered beside the prior year 2025 as opening-2026-01.csv
        # (opening.csv is then the 2025 opening), else opening.csv.
        dated = os.path.join(folder, "opening-2026-01.csv")
        opening = parse(dated if os.path.exists(dated) else os.path.join(folder, "opening.csv"), False)
        if os.path.exists(dated):
            check_prior_year(e, folder, opening, gmap[e], accounts, parse)
        for x in opening:
            if accounts[x[2]]["statement"] != "balance_sheet":
                fail(f"{e}: opening holds a {accounts[x[2]]['statement']} account {x[1]}")
        cum: dict = {}
        for x in opening:
            k = (x[1], x[3], x[4])
            cum[k] = [cum.get(k, [D(0), D(0)])[0] + x[5], cum.get(k, [D(0), D(0)])[1] + x[6]]
        bal[e] = {OPENING: {k: list(v) for k, v in cum.items()}}
        mov[e] = {}
        delivered = set()
        for p in PERIODS:
            fname = [f for f in files if f.startswith(f"tb-{p}.")]
            if p not in periods_of(e):
                if fname:
                    fail(f"{e}: delivers {p}, after it left the group")
                continue
            if len(fname) != 1:
                fail(f"{e}: {len(fname)} deliveries for {p}")
                continue
            delivered.add(p)
            rows = parse(os.path.join(folder, fname[0]), True)
            if any(x[0] != p for x in rows):
                fail(f"{e}/{fname[0]}: rows of another period")
            this: dict = {}
            for x in rows:
                k = (x[1], x[3], x[4])
                this[k] = [this.get(k, [D(0), D(0)])[0] + x[5], this.get(k, [D(0), D(0)])[1] + x[6]]
            prev = bal[e][PERIODS[PERIODS.index(p) - 1] if p != "2026-01" else OPENING]
            if ".balances." in fname[0]:
                m = {}
                for k in set(this) | set(prev):
                    g = gmap[e][k[0]]
                    before = prev.get(k, [D(0), D(0)])
                    if accounts[g]["statement"] != "balance_sheet" and p == "2026-01":
                        before = [D(0), D(0)]
                    now = this.get(k, [D(0), D(0)])
                    m[k] = [now[0] - before[0], now[1] - before[1]]
                mov[e][p] = m
                bal[e][p] = this
            else:
                mov[e][p] = this
                nxt = {k: list(v) for k, v in prev.items()}
                if p == "2026-01":
                    nxt = {k: v for k, v in nxt.items() if accounts[gmap[e][k[0]]]["statement"] == "balance_sheet"}
                for k, v in this.items():
                    old = nxt.get(k, [D(0), D(0)])
                    nxt[k] = [old[0] + v[0], old[1] + v[1]]
                bal[e][p] = nxt
            # historical-basis movements need a rate
            for k, v in mov[e][p].items():
                g = gmap[e][k[0]]
                if accounts[g]["basis"] == "historical" and v[0] != 0 and (e, g, p) not in historical:
                    fail(f"{e} {p}: movement on historical account {g} without rates/historical.csv row")
            # coherence: per group account, assets are debit balances and liabilities
            # credit balances; equity in total is a credit; cash is never negative
            per_group: dict[str, Decimal] = {}
            for k, v in bal[e][p].items():
                per_group[gmap[e][k[0]]] = per_group.get(gmap[e][k[0]], D(0)) + v[0]
            for g, v in sorted(per_group.items()):
                c = accounts[g]["class"]
                if (c == "asset" and v < 0) or (c == "liability" and v > 0):
                    fail(f"{e} {p}: {c} account {g} has the wrong-side balance {v}")
            if sum((v for g, v in per_group.items() if accounts[g]["class"] == "equity"), D(0)) >= 0:
                fail(f"{e} {p}: equity is not a credit")
        unused = set(gmap[e]) - used
        if unused:
            fail(f"{e}: mapped but never used: {sorted(unused)}")

    # ---- intercompany matching ------------------------------------------------------------
    def translate(e, p):
        """EUR of every row: BS at closing of p, P&L as the sum of monthly movements at the
        month's average rate (periodic method)."""
        ccy = ccy_of[e]
        out: dict = {}
        for k, v in bal[e][p].items():
            g = gmap[e][k[0]]
            if accounts[g]["statement"] == "balance_sheet":
                out[k] = (v[0] / r_of(ccy, p, "closing")).quantize(D("0.01"), rounding=ROUND_HALF_UP)
        for q_ in PERIODS[: PERIODS.index(p) + 1] if p != OPENING else []:
            for k, v in mov[e][q_].items():
                g = gmap[e][k[0]]
                if accounts[g]["statement"] != "balance_sheet":
                    out[k] = out.get(k, D(0)) + (v[0] / r_of(ccy, q_, "average")).quantize(
                        D("0.01"), rounding=ROUND_HALF_UP)
        return out

    found_txn: dict = {}
    found_fx: dict = {}
    worst_noise = D(0)
    table = []
    for p in [OPENING] + PERIODS:
        sides: dict = {}  # (pair, kind, side) -> {entity: {ccy: txn}, entity+'_eur': eur}
        in_group = [e for e in entities if p == OPENING or p in periods_of(e)]
        for e in in_group:
            eur = translate(e, p)
            for k, v in bal[e][p].items():
                loc, cp, tccy = k
                g = gmap[e][loc]
                ic = accounts[g]["ic_kind"]
                if not ic or ic == "investment":
                    continue
                side = "bs" if accounts[g]["statement"] == "balance_sheet" else "pl"
                if ic == "dividend" and side == "pl":
                    continue  # compared below against the payer's declared dividend
                if cp not in in_group:
                    continue  # sold: a third party from the month after its last
                pair = tuple(sorted((e, cp)))
                s = sides.setdefault((pair, ic, side), {})
                cur = tccy or ccy_of[e]
                s.setdefault(e, {}).setdefault(cur, D(0))
                s[e][cur] += v[1] if tccy else v[0]
                s.setdefault(e + "_eur", D(0))
                s[e + "_eur"] += eur[k]
            # dividend income (receiver) against dividends declared to it (payer, gross credits)
            for k, v in bal[e][p].items():
                g = gmap[e][k[0]]
                if accounts[g]["ic_kind"] == "dividend" and accounts[g]["statement"] != "balance_sheet":
                    payer = k[1]
                    if payer not in in_group:
                        continue
                    declared = D(0)
                    for q_ in PERIODS[: PERIODS.index(p) + 1] if p != OPENING else []:
                        for k2, v2 in mov[payer][q_].items():
                            if gmap[payer][k2[0]] == "2550" and k2[1] == e and v2[0] < 0:
                                declared += v2[0]
                    income = v[1] if k[2] else v[0]
                    if income != declared:
                        fail(f"{p}: dividend income {e} from {payer} {income} != declared {declared}")
        for (pair, ic, side), s in sorted(sides.items()):
            a, b = pair
            currencies = set(s.get(a, {})) | set(s.get(b, {}))
            for cur in sorted(currencies):
                ta, tb = s.get(a, {}).get(cur, D(0)), s.get(b, {}).get(cur, D(0))
                diff = ta + tb
                if diff:
                    found_txn[(p, pair, ic, side, cur)] = abs(diff)
                    table.append((p, a, b, ic, side, cur, ta, tb, diff, s.get(a + "_eur", D(0)), s.get(b + "_eur", D(0))))
            if len(currencies) > 1:
                fail(f"{p} {pair} {ic}: sides in different transaction currencies {currencies}")
            ea, eb = s.get(a + "_eur", D(0)), s.get(b + "_eur", D(0))
            if all((p, pair, ic, side, c) not in found_txn for c in currencies):
                if abs(ea + eb) > NOISE_EUR:
                    found_fx[(p, pair, ic, side)] = ea + eb
                    table.append((p, a, b, ic, side, "EUR*", ea, eb, ea + eb, ea, eb))
                else:
                    worst_noise = max(worst_noise, abs(ea + eb))

    # ---- document detail ----------------------------------------------------------------
    # The timing differences are documented by the seller: documents dated within the
    # timing window before the period end add up, per pair and kind, to the difference.
    window = settings.get("intercompany", {}).get("timing_window_days", 5)
    documented: dict = {}
    for e in entities:
        path = os.path.join(ent_dir, e, "documents.csv")
        if not os.path.exists(path):
            continue
        for i, r in enumerate(read_csv(path), start=2):
            where = f"{e}/documents.csv:{i}"
            cp, kind, ccy, date = r["counterparty"], r["ic_kind"], r["currency"], r["date"]
            if cp not in entities or cp == e:
                fail(f"{where}: counterparty {cp!r}")
            if kind not in {a["ic_kind"] for a in accounts.values() if a["ic_kind"]}:
                fail(f"{where}: ic_kind {kind!r} is not in the chart")
            if ccy not in MINOR or not re.match(r"^2026-(0[1-9]|1[0-2])-[0-3][0-9]$", date):
                fail(f"{where}: currency or date")
                continue
            a = amount(r["amount"], ccy, where)
            p = date[:7]
            last_day = calendar.monthrange(int(p[:4]), int(p[5:7]))[1]
            if last_day - int(date[8:10]) > window:
                fail(f"{where}: dated outside the timing window of {p}")
            # A document explains the balance-sheet pair of its kind when there is one.
            bs_kind = any(x["ic_kind"] == kind and x["statement"] == "balance_sheet" for x in accounts.values())
            side = "bs" if bs_kind else "pl"
            key = (p, tuple(sorted((e, cp))), kind, side, ccy)
            documented[key] = documented.get(key, D(0)) + a
    for k, v in documented.items():
        if found_txn.get(k) != abs(v):
            fail(f"documents {k} add up to {v}, but the difference is {found_txn.get(k)}")

    for k, v in EXPECTED_TXN.items():
        if found_txn.get(k) != v:
            fail(f"expected deliberate difference {k} of {v}, found {found_txn.get(k)}")
    for k, v in found_txn.items():
        if k not in EXPECTED_TXN:
            fail(f"undocumented intercompany difference {k}: {v}")
    if set(found_fx) != EXPECTED_FX_ONLY:
        fail(f"FX-only differences {sorted(found_fx)} != documented {sorted(EXPECTED_FX_ONLY)}")

    if args.summary:
        print("intercompany differences (side a + side b; EUR* = agree in transaction currency):")
        print("period  a       b       kind   side ccy    a_txn            b_txn            diff          a_EUR            b_EUR")
        for row in table:
            print("{}  {:7} {:7} {:6} {:4} {:5} {:>16} {:>16} {:>13} {:>16} {:>16}".format(*row))
        print(f"largest translated rounding noise on agreeing pairs: {worst_noise} EUR")
        print()
        print("entity   ccy  revenue_ytd_local  profit_ytd_local  revenue_EUR   profit_EUR   total_assets_local")
        for e in entities:
            ccy = ccy_of[e]
            end = periods_of(e)[-1]
            eur = translate(e, end)
            rev = profit = rev_e = prof_e = ta = D(0)
            for k, v in bal[e][end].items():
                g = gmap[e][k[0]]
                st = accounts[g]["statement"]
                if st == "profit_or_loss":
                    profit -= v[0]
                    prof_e -= eur[k]
                    if g in ("4000", "4100", "4500"):
                        rev -= v[0]
                        rev_e -= eur[k]
                elif accounts[g]["class"] == "asset":
                    ta += v[0]
            print(f"{e:8} {ccy}  {rev:>17} {profit:>17} {rev_e:>12} {prof_e:>12} {ta:>18}")

    if failures:
        print(f"{len(failures)} check(s) failed:")
        for f in failures:
            print("  " + f)
        return 1
    print("all checks passed")
    return 0


if __name__ == "__main__":
    sys.exit(main())

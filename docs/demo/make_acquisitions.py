"""Writes entities/acquisitions.csv for the demo group from the generated ledgers, so
that the acquisition data agrees with the books (run after make_demo.py).

For each subsidiary and the associate: the equity acquired is its share capital and
share premium (acquisitions before 2026, invented: the retained earnings brought forward
are post-acquisition), except WSL-PL, bought in 2021 with accumulated losses of PLN
800,000 that reduce the net assets acquired (so its goodwill is positive), translated at the historical amounts of opening.csv; for GLF-BH,
acquired 2026-04-01, it is all of its equity at that date (opening equity plus the
results of January to March) plus the fair value adjustment of its plant (UPLIFT below,
also written to entities/fair_value_adjustments.csv), translated at the 2026-03 closing
rate. The consideration
is the holders' investment cost, converted into the acquired entity's currency at the
same historical rate. Stdlib only, Decimal arithmetic."""
import csv
from decimal import Decimal as D, ROUND_HALF_UP
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
ENT = ROOT / "entities"


def rows(path):
    with open(path, newline="", encoding="utf-8") as f:
        return list(csv.DictReader(f))


accounts = {r["account"]: r for r in rows(ENT / "accounts.csv")}
entities = {r["entity"]: r for r in rows(ENT / "entities.csv")}
holdings = rows(ENT / "holdings.csv")
rates = {(r["period"], r["currency"]): r for r in rows(ROOT / "rates" / "monthly.csv")}
MINOR = {"JPY": 0, "BHD": 3}
# GLF-BH's plant is worth more than its books say at the acquisition (invented): an
# uplift of BHD 60,000 with a remaining life of five years, depreciated in the group.
UPLIFT = ("GLF-BH", "1000", D("60000.000"), 60, "6100",
          "plant and machinery: fair value above carrying amount; remaining life 5 years")


def q(x, ccy):
    return x.quantize(D(1).scaleb(-MINOR.get(ccy, 2)), ROUND_HALF_UP)


def mapping(e):
    return {r["local_account"]: r["group_account"] for r in rows(ENT / e / "mapping.csv")}


def group_balances(e, rows_):
    m = mapping(e)
    out = {}
    for r in rows_:
        g = m[r["account"]]
        out.setdefault(g, [D(0), D(0), r.get("counterparty") or ""])
        out[g][0] += D(r["amount"])
        if r.get("amount_presentation"):
            out[g][1] += D(r["amount_presentation"])
    return out


def investment_cost(owned):
    """Holders' investment lines (ic_kind investment) naming `owned`, in EUR at the
    holders' historical rate (their share capital's translated / local amount)."""
    total = D(0)
    for h in holdings:
        if h["owned"] != owned:
            continue
        holder = h["owner"]
        m = mapping(holder)
        op = rows(ENT / holder / "opening.csv")
        cost = sum((D(r["amount"]) for r in op
                    if accounts[m[r["account"]]]["ic_kind"] in ("investment",) and r["counterparty"] == owned), D(0))
        if owned == "HEL-CH":
            cost = sum((D(r["amount"]) for r in op if m[r["account"]] == "1300"), D(0))
        if cost == 0:
            continue
        sc = [r for r in op if m[r["account"]] == "3000"]
        rate = sum(D(r["amount_presentation"]) for r in sc) / sum(D(r["amount"]) for r in sc)
        total += cost * rate
    return total


out = ["owned,date,consideration,nci_measurement,nci_fair_value,net_assets,net_assets_presentation,impairment,note"]
for h in holdings:
    owned = h["owned"]
    if any(line.split(",")[0] == owned for line in out[1:]):
        continue
    ccy = entities[owned]["currency"]
    op = rows(ENT / owned / "opening.csv")
    m = mapping(owned)
    if owned == "GLF-BH":
        eq = [r for r in op if accounts[m[r["account"]]]["class"] == "equity"]
        na = sum((D(r["amount"]) for r in eq), D(0))
        for month in ("01", "02", "03"):
            for r in rows(ENT / owned / f"tb-2026-{month}.movements.csv"):
                if accounts[m[r["account"]]]["statement"] != "balance_sheet":
                    na += D(r["amount"])
        na = -na + UPLIFT[2]
        rate = D(rates[("2026-03", ccy)]["closing"])
        na_pres = q(na / rate, "EUR")
        cost_eur = D("3600000.00")  # paid 2.7m + the interest held before at 0.9m (IFRS 3.32)
        consideration = q(cost_eur * rate, ccy)
        date = "2026-04-01"
        measurement, nci_fv = "fair_value", q(na * D("0.40") * D("1.05"), ccy)
        note = "control in stages: 45% bought for EUR 2.7m + the 15% held since 2023 at its fair value EUR 0.9m; NCI at fair value"
    elif owned == "WSL-PL":
        # Bought on 2021-09-01 (invented) when it had accumulated losses of PLN 800,000:
        # net assets acquired PLN 11,200,000 (capital 12,000,000 less the losses), at
        # that day's 4.5500 PLN/EUR. ALD-UK paid GBP 2,262,857.15, which is PLN
        # 12,000,000.04 at that day's 0.8580 GBP/EUR: goodwill PLN 800,000.04.
        eq = [r for r in op if m[r["account"]] in ("3000", "3100")]
        na = -sum((D(r["amount"]) for r in eq), D(0)) - D("800000.00")
        na_pres = q(na / D("4.5500"), "EUR")
        cost_gbp = sum((D(r["amount"]) for r in rows(ENT / "ALD-UK" / "opening.csv")
                        if r["counterparty"] == owned
                        and accounts[mapping("ALD-UK")[r["account"]]]["ic_kind"] == "investment"), D(0))
        consideration = q(cost_gbp / D("0.8580") * D("4.5500"), ccy)
        date = min(x["valid_from"] for x in holdings if x["owned"] == owned)
        measurement, nci_fv = "share_of_net_assets", ""
        note = "bought with accumulated losses of PLN 800000 (invented)"
    else:
        eq = [r for r in op if m[r["account"]] in ("3000", "3100")]
        na = -sum((D(r["amount"]) for r in eq), D(0))
        na_pres = -sum((D(r["amount_presentation"]) for r in eq), D(0))
        cost_eur = investment_cost(owned)
        consideration = q(cost_eur * na / na_pres, ccy)
        date = min(x["valid_from"] for x in holdings if x["owned"] == owned)
        measurement, nci_fv = "share_of_net_assets", ""
        note = "equity acquired: share capital and share premium (invented)"
    out.append(f"{owned},{date},{consideration},{measurement},{nci_fv},{q(na, ccy)},{na_pres},0,{note}")

(ENT / "acquisitions.csv").write_text("\n".join(out) + "\n", encoding="utf-8")
print("\n".join(out))
owned, account, amount, life, expense, note = UPLIFT
(ENT / "fair_value_adjustments.csv").write_text(
    "owned,account,amount,useful_life_months,expense_account,note\n"
    f"{owned},{account},{amount},{life},{expense},{note}\n",
    encoding="utf-8",
)

#!/usr/bin/env python3
"""Generates the bundled demo data of Tessera: the invented Aldermoor Group.

Writes entities/ and rates/ (relative to the repository root, or to --out DIR) exactly in
the input format of docs/formats.md. The scenario is described in docs/demo.md.

How it works: every entity keeps a small double-entry ledger in its own chart of accounts
and functional currency. Each month the script posts balanced journal entries (sales,
purchases, staff, depreciation, intercompany invoices and their settlement, loan interest,
dividends, month-end revaluation of foreign-currency items, tax accrual) and writes the
month's movements (or, for two entities, the month-end balances) per local account,
counterparty and transaction currency.

Rules the script keeps:
- Python 3.11 standard library only; every amount is a decimal.Decimal, never a float.
- Deterministic: no clock, no randomness; re-running writes byte-identical files.
- Every journal entry balances, every trial balance and opening balance sums to zero,
  every amount respects its currency's ISO 4217 minor unit (asserted while writing).

All company names, figures and rates are invented for the demo ("invented demo rate").
"""

from __future__ import annotations

import argparse
import os
import sys
from decimal import ROUND_HALF_UP, Decimal, getcontext

getcontext().prec = 50
D = Decimal

# ---------------------------------------------------------------------------------------
# Currencies and periods
# ---------------------------------------------------------------------------------------

# ISO 4217 minor units of the currencies the demo uses (JPY 0, BHD 3: recalled from the
# ISO 4217 table, the same values the iso_currency crate packages).
MINOR_UNIT = {"EUR": 2, "GBP": 2, "USD": 2, "MXN": 2, "JPY": 0, "BHD": 3, "SEK": 2,
              "CHF": 2, "PLN": 2}
PRESENTATION = "EUR"
OPENING_PERIOD = "2025-12"
PERIODS = [f"2026-{m:02d}" for m in range(1, 13)]
ALL_PERIODS = [OPENING_PERIOD] + PERIODS
BALANCES_DELIVERY = {"KIS-JP", "NRD-SE"}  # these deliver tb-*.balances.csv


def q(x: Decimal, ccy: str) -> Decimal:
    """Rounds to the currency's minor unit, half away from zero."""
    return x.quantize(D(1).scaleb(-MINOR_UNIT[ccy]), rounding=ROUND_HALF_UP)


def fmt(x: Decimal, ccy: str, exact: bool = True) -> str:
    """Writes an amount with exactly the currency's decimals. Ledger amounts must already be
    at the minor unit (exact); only computed presentation amounts are rounded here."""
    assert isinstance(x, Decimal)
    if exact:
        assert x == q(x, ccy), f"{x} has more decimals than {ccy} allows"
    x = q(x, ccy)
    if x == 0:
        x = abs(x)  # never write "-0.00"
    return f"{x:.{MINOR_UNIT[ccy]}f}"


def month_of(period: str) -> int:
    return int(period[5:7])


def next_period(period: str) -> str | None:
    i = ALL_PERIODS.index(period)
    return ALL_PERIODS[i + 1] if i + 1 < len(ALL_PERIODS) else None


# ---------------------------------------------------------------------------------------
# Rates: units of currency per 1 EUR (the way the euro system quotes its reference rates)
# ---------------------------------------------------------------------------------------

# Month-end closing rates, 2025-11 .. 2026-12. 2025-11 is only used to form the average of
# 2025-12 and is not written. All values invented, in the magnitudes of recent years.
CLOSING = {
    "USD": "1.0880 1.0920 1.0875 1.0810 1.0890 1.0985 1.1040 1.1120 1.1065 1.1150 1.1090 1.1010 1.0955 1.1035",
    "GBP": "0.84410 0.84620 0.84350 0.84110 0.84780 0.85240 0.85610 0.85980 0.85730 0.86150 0.86420 0.86090 0.85870 0.86210",
    "JPY": "157.85 158.42 157.10 156.35 158.90 160.75 162.30 163.85 161.90 164.20 165.60 163.40 162.15 164.85",
    "MXN": "20.2210 20.1450 19.9820 19.7640 20.0930 20.4780 20.8850 21.1240 20.9570 21.3460 21.0980 20.7720 20.6150 20.9840",
    "SEK": "11.4780 11.4520 11.3980 11.3250 11.2810 11.3640 11.4470 11.5230 11.4880 11.5960 11.6420 11.5510 11.4790 11.5340",
    "CHF": "0.9405 0.9420 0.9395 0.9360 0.9410 0.9455 0.9490 0.9530 0.9505 0.9560 0.9585 0.9540 0.9510 0.9565",
    "PLN": "4.2740 4.2680 4.2590 4.2510 4.2730 4.2960 4.3120 4.3350 4.3210 4.3470 4.3590 4.3380 4.3240 4.3420",
}
# The Bahraini dinar is pegged to the US dollar at 0.376 BHD per USD (a fact of the trade,
# recalled from memory); its EUR rates are derived from the USD rates through the peg.
BHD_PER_USD = D("0.376")
RATE_DECIMALS = 6


def build_rates() -> dict:
    rates: dict[str, dict[str, dict[str, Decimal | None]]] = {}
    months = ["2025-11"] + ALL_PERIODS
    for ccy, text in CLOSING.items():
        closes = [D(v) for v in text.split()]
        assert len(closes) == len(months), ccy
        rates[ccy] = {}
        for i in range(1, len(months)):
            # Monthly average: the mean of the two month-end fixings with a small invented
            # tilt, so it is not exactly the midpoint.
            tilt = D((i * 5) % 7 - 3) / D(10000)
            avg = ((closes[i - 1] + closes[i]) / 2 * (1 + tilt / 10)).quantize(
                D(1).scaleb(-RATE_DECIMALS), rounding=ROUND_HALF_UP)
            rates[ccy][months[i]] = {"closing": closes[i], "average": avg}
    rates["BHD"] = {}
    for p in ALL_PERIODS:
        u = rates["USD"][p]
        rates["BHD"][p] = {
            k: (BHD_PER_USD * u[k]).quantize(D(1).scaleb(-RATE_DECIMALS), rounding=ROUND_HALF_UP)
            for k in ("closing", "average")}
    # Year-to-date average: the arithmetic mean of the monthly averages from January through
    # the month (a documented simplification of the mean of daily fixings).
    for ccy in rates:
        acc = []
        for p in ALL_PERIODS:
            if p == OPENING_PERIOD:
                rates[ccy][p]["average_ytd"] = None  # fiscal 2025: not part of the demo
                continue
            acc.append(rates[ccy][p]["average"])
            rates[ccy][p]["average_ytd"] = (sum(acc) / len(acc)).quantize(
                D(1).scaleb(-RATE_DECIMALS), rounding=ROUND_HALF_UP)
    return rates


RATES = build_rates()

# ---------------------------------------------------------------------------------------
# The prior fiscal year 2025 (comparatives, IAS 1.38): a plain year that ends exactly in
# the 2026 opening balances
# ---------------------------------------------------------------------------------------

PRIOR_PERIODS = [f"2025-{m:02d}" for m in range(1, 12)]  # 2025-12 is the opening above
PRIOR_OPENING = "2024-12"
PRIOR_YEAR_START = "2026-01"  # the year whose opening the prior year must end in
PRIOR_YEAR_ENTITIES = {"ALD-NL", "ALD-UK", "ALD-US", "BRW-US", "BRW-MX", "KIS-JP", "NRD-SE",
                       "HEL-CH", "WSL-PL"}  # every entity but GLF-BH, acquired in 2026
# Month-end closing rates 2024-11 .. 2025-10 (2025-11 and 2025-12 are in CLOSING). Invented.
CLOSING_PRIOR = {
    "USD": "1.0560 1.0390 1.0350 1.0420 1.0820 1.1380 1.1350 1.1710 1.1680 1.1620 1.1730 1.1540",
    "GBP": "0.83210 0.82920 0.83640 0.82810 0.83560 0.85190 0.84870 0.85320 0.86570 0.86740 0.87260 0.87580",
    "JPY": "158.20 162.74 160.86 158.02 160.55 161.89 163.04 163.64 168.86 172.50 173.76 175.60",
    "MXN": "21.5400 21.5504 21.3800 21.2800 21.4600 21.3320 21.8910 22.2220 21.8920 21.5830 21.4400 21.2740",
    "SEK": "11.5280 11.4590 11.2350 11.1420 10.8645 10.9035 10.8940 11.0420 11.1780 11.0900 10.9310 11.1220",
    "CHF": "0.9300 0.9412 0.9413 0.9377 0.9550 0.9350 0.9367 0.9336 0.9432 0.9374 0.9355 0.9299",
    "PLN": "4.3150 4.2750 4.2133 4.1940 4.1840 4.2610 4.2740 4.2423 4.2685 4.2610 4.2645 4.2520",
}


def build_prior_rates() -> None:
    """Adds 2024-12 .. 2025-11 to RATES (same averaging as build_rates; no year-to-date
    average: the demo translates income month by month)."""
    months = ["2024-11"] + [PRIOR_OPENING] + PRIOR_PERIODS
    for ccy, text in CLOSING_PRIOR.items():
        closes = [D(v) for v in text.split()] + [D(CLOSING[ccy].split()[0])]
        assert len(closes) == len(months), ccy
        for i in range(1, len(months)):
            tilt = D((i * 5) % 7 - 3) / D(10000)
            avg = ((closes[i - 1] + closes[i]) / 2 * (1 + tilt / 10)).quantize(
                D(1).scaleb(-RATE_DECIMALS), rounding=ROUND_HALF_UP)
            RATES[ccy][months[i]] = {"closing": closes[i], "average": avg}
    for p in [PRIOR_OPENING] + PRIOR_PERIODS:
        u = RATES["USD"][p]
        RATES["BHD"][p] = {
            k: (BHD_PER_USD * u[k]).quantize(D(1).scaleb(-RATE_DECIMALS), rounding=ROUND_HALF_UP)
            for k in ("closing", "average")}
    # Year-to-date averages of 2025, as build_rates does for 2026.
    for ccy in RATES:
        acc = []
        for p in PRIOR_PERIODS + [OPENING_PERIOD]:
            acc.append(RATES[ccy][p]["average"])
            RATES[ccy][p]["average_ytd"] = (sum(acc) / len(acc)).quantize(
                D(1).scaleb(-RATE_DECIMALS), rounding=ROUND_HALF_UP)
        RATES[ccy][PRIOR_OPENING]["average_ytd"] = None


build_prior_rates()


def rate(ccy: str, period: str, kind: str) -> Decimal:
    """Units of ccy per 1 EUR."""
    if ccy == PRESENTATION:
        return D(1)
    return RATES[ccy][period][kind]


def cross(func: str, txn: str, period: str, kind: str) -> Decimal:
    """Units of the functional currency per 1 unit of the transaction currency."""
    return rate(func, period, kind) / rate(txn, period, kind)


# Rates of single equity transactions (rates/historical.csv): the dividends. The rate is the
# invented fixing of the declaration date.
DIVIDENDS = [
    # payer, receiver, period declared, period paid, total, intragroup share, rate, note
    dict(payer="NRD-SE", period="2026-06", paid="2026-07", total=D("18000000.00"),
         shares={"NRD-SE->ALD-NL": D("1")}, rate=D("11.4380"),
         note="dividend SEK 18000000.00 declared 2026-06-15 to ALD-NL (100%)"),
    dict(payer="ALD-US", period="2026-09", paid="2026-10", total=D("1500000.00"),
         shares={"ALD-US->ALD-NL": D("0.80")}, rate=D("1.1102"),
         note="dividend USD 1500000.00 declared 2026-09-15: 80% ALD-NL and 20% outside shareholders"),
]

# ---------------------------------------------------------------------------------------
# Group chart of accounts
# ---------------------------------------------------------------------------------------

# account, name, statement, class, basis, ic_kind, non_current
GROUP_ACCOUNTS = [
    ("1000", "Property plant and equipment", "balance_sheet", "asset", "closing", "", "true"),
    ("1050", "Intangible assets", "balance_sheet", "asset", "closing", "", "true"),
    ("1100", "Goodwill", "balance_sheet", "asset", "closing", "", "true"),
    ("1200", "Investments in subsidiaries", "balance_sheet", "asset", "closing", "investment", "true"),
    ("1300", "Investments in associates", "balance_sheet", "asset", "closing", "", "true"),
    ("1400", "Loans to group entities", "balance_sheet", "asset", "closing", "loan", "true"),
    ("1500", "Inventories", "balance_sheet", "asset", "closing", "", ""),
    ("1600", "Trade receivables", "balance_sheet", "asset", "closing", "", ""),
    ("1650", "Receivables from group entities", "balance_sheet", "asset", "closing", "trade", ""),
    ("1660", "Dividends receivable from group entities", "balance_sheet", "asset", "closing", "dividend", ""),
    ("1700", "Other receivables and prepayments", "balance_sheet", "asset", "closing", "", ""),
    ("1800", "Cash and cash equivalents", "balance_sheet", "asset", "closing", "", ""),
    ("2000", "Bank loans", "balance_sheet", "liability", "closing", "", ""),
    ("2100", "Borrowings from group entities", "balance_sheet", "liability", "closing", "loan", ""),
    ("2400", "Trade payables", "balance_sheet", "liability", "closing", "", ""),
    ("2450", "Payables to group entities", "balance_sheet", "liability", "closing", "trade", ""),
    ("2500", "Income tax payable", "balance_sheet", "liability", "closing", "", ""),
    ("2550", "Dividends payable to group entities", "balance_sheet", "liability", "closing", "dividend", ""),
    ("2560", "Dividends payable to outside shareholders", "balance_sheet", "liability", "closing", "", ""),
    ("2600", "Accruals and other payables", "balance_sheet", "liability", "closing", "", ""),
    ("3000", "Share capital", "balance_sheet", "equity", "historical", "", ""),
    ("3100", "Share premium", "balance_sheet", "equity", "historical", "", ""),
    ("3200", "Retained earnings", "balance_sheet", "equity", "historical", "", ""),
    ("3300", "Translation reserve", "balance_sheet", "equity", "historical", "", ""),
    ("3400", "Revaluation surplus", "balance_sheet", "equity", "historical", "", ""),
    ("3900", "Non-controlling interests", "balance_sheet", "equity", "historical", "", ""),
    ("4000", "Revenue from external customers", "profit_or_loss", "income", "average", "", ""),
    ("4100", "Revenue from group entities", "profit_or_loss", "income", "average", "sales", ""),
    ("4500", "Management fee income from group entities", "profit_or_loss", "income", "average", "fees", ""),
    ("4900", "Share of result of associates", "profit_or_loss", "income", "average", "", ""),
    ("5000", "Cost of sales", "profit_or_loss", "expense", "average", "", ""),
    ("5100", "Purchases from group entities", "profit_or_loss", "expense", "average", "sales", ""),
    ("6000", "Staff costs", "profit_or_loss", "expense", "average", "", ""),
    ("6100", "Depreciation and amortisation", "profit_or_loss", "expense", "average", "", ""),
    ("6200", "Other operating expenses", "profit_or_loss", "expense", "average", "", ""),
    ("6300", "Management fees charged by group entities", "profit_or_loss", "expense", "average", "fees", ""),
    ("6950", "Intercompany differences", "profit_or_loss", "expense", "average", "", ""),
    ("7000", "Interest income from group entities", "profit_or_loss", "income", "average", "interest", ""),
    ("7100", "Interest expense to group entities", "profit_or_loss", "expense", "average", "interest", ""),
    ("7200", "Interest expense external", "profit_or_loss", "expense", "average", "", ""),
    ("7300", "Foreign exchange gains", "profit_or_loss", "income", "average", "", ""),
    ("7350", "Foreign exchange losses", "profit_or_loss", "expense", "average", "", ""),
    ("7400", "Dividend income from group entities", "profit_or_loss", "income", "average", "dividend", ""),
    ("7500", "Gains and losses on changes in ownership", "profit_or_loss", "income", "average", "", ""),
    ("8000", "Income tax expense", "profit_or_loss", "expense", "average", "", ""),
    ("9000", "Exchange differences on translating foreign operations", "oci", "income", "average", "", ""),
    ("9100", "Gains on property revaluation", "oci", "income", "average", "", ""),
]
# The reserve an OCI account accumulates into (accounts.csv `reserve`); the others go to
# the translation reserve.
RESERVES = {"9100": "3400"}
ACC = {a[0]: dict(name=a[1], statement=a[2], cls=a[3], basis=a[4], ic_kind=a[5])
       for a in GROUP_ACCOUNTS}
# Foreign-currency items revalued at the closing rate at each month end (IAS 21.23a).
MONETARY = {"1400", "1650", "1660", "2100", "2450", "2550"}

ROLE_ACCOUNTS = dict(retained_earnings="3200", translation_reserve="3300",
                     translation_difference="9000",
                     non_controlling_interest="3900", goodwill="1100",
                     equity_investments="1300", equity_result="4900",
                     intercompany_difference="6950", inventory="1500",
                     cost_of_sales="5000")

LAYOUTS = [
    # statement, line, label, accounts, total_of, presentation
    ("profit_or_loss", "REV", "Revenue", "4000..4599", "", "credit_positive"),
    ("profit_or_loss", "COS", "Cost of sales", "5000..5999", "", "credit_positive"),
    ("profit_or_loss", "GP", "Gross profit", "", "REV COS", "credit_positive"),
    ("profit_or_loss", "OPEX", "Operating expenses", "6000..6999", "", "credit_positive"),
    ("profit_or_loss", "OP", "Operating profit", "", "GP OPEX", "credit_positive"),
    ("profit_or_loss", "FIN", "Finance result", "7000..7999", "", "credit_positive"),
    ("profit_or_loss", "ASSOC", "Share of result of associates", "4900", "", "credit_positive"),
    ("profit_or_loss", "PBT", "Profit before tax", "", "OP FIN ASSOC", "credit_positive"),
    ("profit_or_loss", "TAX", "Income tax", "8000..8999", "", "credit_positive"),
    ("profit_or_loss", "PROFIT", "Profit for the period", "", "PBT TAX", "credit_positive"),
    ("profit_or_loss", "GM", "Gross margin", "", "GP / REV", "credit_positive"),
    ("profit_or_loss", "OM", "Operating margin", "", "OP / REV", "credit_positive"),
    ("oci", "TRD", "Exchange differences on translating foreign operations", "9000", "", "credit_positive"),
    ("oci", "REVAL", "Gains on property revaluation", "9100", "", "credit_positive"),
    ("oci", "OCI", "Total other comprehensive income", "", "TRD REVAL", "credit_positive"),
    # The balance sheet shows at least the line items of IAS 1.54 that the group has.
    ("balance_sheet", "PPE", "Property plant and equipment", "1000", "", "debit_positive"),
    ("balance_sheet", "INTA", "Intangible assets", "1050", "", "debit_positive"),
    ("balance_sheet", "GW", "Goodwill", "1100", "", "debit_positive"),
    ("balance_sheet", "EQA", "Investments accounted for using the equity method", "1300", "",
     "debit_positive"),
    ("balance_sheet", "OFA", "Other non-current financial assets", "1200 1400", "", "debit_positive"),
    ("balance_sheet", "NCA", "Total non-current assets", "", "PPE INTA GW EQA OFA", "debit_positive"),
    ("balance_sheet", "INV", "Inventories", "1500", "", "debit_positive"),
    ("balance_sheet", "REC", "Trade and other receivables", "1600..1799", "", "debit_positive"),
    ("balance_sheet", "CASH", "Cash and cash equivalents", "1800", "", "debit_positive"),
    ("balance_sheet", "CA", "Total current assets", "", "INV REC CASH", "debit_positive"),
    ("balance_sheet", "TA", "Total assets", "", "NCA CA", "debit_positive"),
    ("balance_sheet", "SC", "Share capital", "3000", "", "credit_positive"),
    ("balance_sheet", "SP", "Share premium", "3100", "", "credit_positive"),
    ("balance_sheet", "RE", "Retained earnings", "3200", "", "credit_positive"),
    ("balance_sheet", "TR", "Translation reserve", "3300", "", "credit_positive"),
    ("balance_sheet", "RS", "Revaluation surplus", "3400", "", "credit_positive"),
    ("balance_sheet", "EQP", "Equity attributable to owners of the parent", "", "SC SP RE TR RS",
     "credit_positive"),
    ("balance_sheet", "NCI", "Non-controlling interests", "3900", "", "credit_positive"),
    ("balance_sheet", "EQ", "Total equity", "", "EQP NCI", "credit_positive"),
    ("balance_sheet", "BOR", "Borrowings", "2000 2100", "", "credit_positive"),
    ("balance_sheet", "NCL", "Total non-current liabilities", "", "BOR", "credit_positive"),
    ("balance_sheet", "PAY", "Trade and other payables", "2400 2450 2550 2560 2600", "",
     "credit_positive"),
    ("balance_sheet", "TAXL", "Current tax liabilities", "2500", "", "credit_positive"),
    ("balance_sheet", "CL", "Total current liabilities", "", "PAY TAXL", "credit_positive"),
    ("balance_sheet", "TEL", "Total equity and liabilities", "", "EQ NCL CL", "credit_positive"),
    ("equity_changes", "SC", "Share capital", "3000", "", "credit_positive"),
    ("equity_changes", "SP", "Share premium", "3100", "", "credit_positive"),
    ("equity_changes", "RE", "Retained earnings", "3200", "", "credit_positive"),
    ("equity_changes", "TR", "Translation reserve", "3300", "", "credit_positive"),
    ("equity_changes", "RS", "Revaluation surplus", "3400", "", "credit_positive"),
    ("equity_changes", "NCI", "Non-controlling interests", "3900", "", "credit_positive"),
    ("equity_changes", "TOTAL", "Total equity", "", "SC SP RE TR RS NCI", "credit_positive"),
]

# ---------------------------------------------------------------------------------------
# Entities, holdings, local charts
# ---------------------------------------------------------------------------------------

ENTITIES = [
    # entity, name, country, currency, geography, business
    ("ALD-NL", "Aldermoor Holding N.V.", "NL", "EUR", "Europe", "Corporate"),
    ("ALD-UK", "Aldermoor Instruments Ltd", "GB", "GBP", "Europe", "Instruments"),
    ("ALD-US", "Aldermoor Americas Holdings Inc.", "US", "USD", "Americas", "Corporate"),
    ("BRW-US", "Brightwater Instruments Inc.", "US", "USD", "Americas", "Instruments"),
    ("BRW-MX", "Brightwater Instrumentos de México S.A. de C.V.", "MX", "MXN", "Americas", "Instruments"),
    ("KIS-JP", "Kisaragi Sensors K.K.", "JP", "JPY", "Asia", "Sensors"),
    ("GLF-BH", "Gulfmere Technical Trading W.L.L.", "BH", "BHD", "Middle East", "Sensors"),
    ("NRD-SE", "Nordvik Sensorteknik AB", "SE", "SEK", "Europe", "Sensors"),
    ("HEL-CH", "Helvara Präzision AG", "CH", "CHF", "Europe", "Components"),
    ("WSL-PL", "Wislane Components Sp. z o.o.", "PL", "PLN", "Europe", "Components"),
]
CCY = {e[0]: e[3] for e in ENTITIES}
ENTITY_INDEX = {e[0]: i for i, e in enumerate(ENTITIES)}

# The sale of NRD-SE (docs/demo.md, "The sale of NRD-SE"): ALD-NL sells all of it on
# 2026-10-01 for EUR cash received that day. NRD-SE is consolidated to 2026-09-30 and
# delivers nothing after; ALD-NL stops charging it fees after September.
NRD_SALE = dict(entity="NRD-SE", date="2026-10-01", period="2026-10", last="2026-09",
                proceeds=D("8000000.00"), gain_account="7500")
NRD_SALE_VALID_TO = "2026-09-30"

HOLDINGS = [
    # owner, owned, capital_share, voting_share, valid_from[, valid_to]
    ("ALD-NL", "ALD-UK", "1.00", "1.00", "2012-03-01"),
    ("ALD-NL", "ALD-US", "0.80", "0.80", "2015-01-01"),
    ("ALD-US", "BRW-US", "0.75", "0.75", "2016-07-01"),
    ("BRW-US", "BRW-MX", "0.70", "0.70", "2019-02-01"),
    ("ALD-NL", "KIS-JP", "0.10", "0.10", "2018-10-01"),
    ("ALD-US", "KIS-JP", "0.70", "0.70", "2018-10-01"),
    # Control in stages (docs/demo.md): 15% held since 2023, 45% more bought on 2026-04-01.
    ("ALD-NL", "GLF-BH", "0.15", "0.15", "2023-07-01", "2026-03-31"),
    ("ALD-NL", "GLF-BH", "0.60", "0.60", "2026-04-01"),
    ("ALD-NL", "NRD-SE", "1.00", "1.00", "2014-05-01", NRD_SALE_VALID_TO),
    ("ALD-NL", "HEL-CH", "0.30", "0.30", "2019-07-01"),
    ("ALD-UK", "WSL-PL", "1.00", "1.00", "2021-09-01"),
]

# Local charts: semantic key (or key:counterparty / key:currency) -> (local account, label,
# group account). Several local accounts may map to one group account; the same local
# account may serve two keys (e.g. one local FX account for gains and losses).
CHARTS: dict[str, dict[str, tuple[str, str, str]]] = {
    "ALD-NL": {  # six digits
        "ppe_cost": ("101000", "Inventaris en installaties aanschafwaarde", "1000"),
        "ppe_accdep": ("101900", "Cumulatieve afschrijving inventaris", "1000"),
        "int_cost": ("102000", "Software aanschafwaarde", "1050"),
        "int_accamort": ("102900", "Cumulatieve afschrijving software", "1050"),
        "invest_sub": ("105000", "Deelnemingen in groepsmaatschappijen", "1200"),
        "invest_assoc": ("105500", "Deelnemingen in geassocieerde ondernemingen", "1300"),
        "loan_ic": ("106000", "Leningen u/g groepsmaatschappijen", "1400"),
        "cash": ("110100", "Bank rekening-courant", "1800"),
        "cash2": ("110200", "Bank depositorekening", "1800"),
        "ar_ext": ("130000", "Debiteuren", "1600"),
        "ar_ic": ("131000", "Vorderingen op groepsmaatschappijen", "1650"),
        "div_recv": ("131500", "Te ontvangen dividend groepsmaatschappijen", "1660"),
        "other_recv": ("135000", "Overige vorderingen en vooruitbetaalde kosten", "1700"),
        "ap_ext": ("140000", "Crediteuren", "2400"),
        "tax_payable": ("150000", "Te betalen vennootschapsbelasting", "2500"),
        "accruals": ("155000", "Overlopende passiva", "2600"),
        "bank_loan": ("160000", "Banklening acquisitiefinanciering", "2000"),
        "share_capital": ("200000", "Geplaatst kapitaal", "3000"),
        "share_premium": ("201000", "Agioreserve", "3100"),
        "retained": ("205000", "Overige reserves", "3200"),
        "wages": ("400000", "Brutolonen", "6000"),
        "social": ("401000", "Sociale lasten en pensioenen", "6000"),
        "depr": ("430000", "Afschrijving inventaris", "6100"),
        "amort": ("431000", "Afschrijving software", "6100"),
        "rent": ("440000", "Huisvestingskosten", "6200"),
        "opex": ("450000", "Algemene kosten", "6200"),
        "cogs_purch": ("700000", "Kostprijs uitbesteed werk", "5000"),
        "rev_ext": ("800000", "Omzet engineeringdiensten", "4000"),
        "rev_ext2": ("801000", "Omzet licenties", "4000"),
        "fee_income": ("805000", "Management fees groepsmaatschappijen", "4500"),
        "int_income_ic": ("900000", "Rente leningen groepsmaatschappijen", "7000"),
        "int_exp_bank": ("910000", "Rentelasten bank", "7200"),
        "fx_gain": ("920000", "Koersresultaten positief", "7300"),
        "fx_loss": ("921000", "Koersresultaten negatief", "7350"),
        "div_income": ("930000", "Dividend uit deelnemingen", "7400"),
        "gain_disposal": ("940000", "Boekresultaat verkoop deelnemingen", "7500"),
        "tax": ("960000", "Vennootschapsbelasting", "8000"),
    },
    "ALD-UK": {  # four digits, numbers that collide with group numbers on purpose
        "inventory": ("1001", "Stock", "1500"),
        "ppe_cost": ("1020", "Plant and machinery cost", "1000"),
        "ppe_accdep": ("1021", "Plant and machinery depreciation", "1000"),
        "int_cost": ("1030", "Software cost", "1050"),
        "int_accamort": ("1031", "Software amortisation", "1050"),
        "invest_sub": ("1050", "Investment in subsidiary undertakings", "1200"),
        "ar_ext": ("1100", "Debtors control", "1600"),
        "other_recv": ("1103", "Prepayments", "1700"),
        "cash": ("1200", "Bank current account", "1800"),
        "cash2": ("1210", "Bank deposit account", "1800"),
        "ap_ext": ("2100", "Creditors control", "2400"),
        "accruals": ("2109", "Accruals", "2600"),
        "ap_ic:USD": ("2110", "Group creditors USD", "2450"),
        "ap_ic:EUR": ("2111", "Group creditors EUR", "2450"),
        "tax_payable": ("2320", "Corporation tax", "2500"),
        "share_capital": ("3000", "Ordinary shares", "3000"),
        "share_premium": ("3010", "Share premium account", "3100"),
        "retained": ("3200", "Profit and loss account", "3200"),
        "rev_ext": ("4000", "Sales UK", "4000"),
        "rev_ext2": ("4009", "Sales export", "4000"),
        "cogs_purch": ("5000", "Materials purchased", "5000"),
        "ic_purch": ("5010", "Purchases from group companies", "5100"),
        "stock_change": ("5200", "Stock movement", "5000"),
        "wages": ("7000", "Gross wages", "6000"),
        "social": ("7006", "Employers national insurance", "6000"),
        "rent": ("7100", "Rent", "6200"),
        "opex": ("7500", "Office and selling costs", "6200"),
        "fx_gain": ("7906", "Exchange rate variance", "7350"),
        "fx_loss": ("7906", "Exchange rate variance", "7350"),
        "depr": ("8000", "Depreciation", "6100"),
        "amort": ("8001", "Amortisation", "6100"),
        "fee_expense": ("8210", "Group management charges", "6300"),
        "tax": ("8500", "Corporation tax charge", "8000"),
    },
    "ALD-US": {  # five digits
        "cash": ("10100", "Cash operating account", "1800"),
        "ar_ic": ("12100", "Intercompany receivable", "1650"),
        "other_recv": ("14100", "Prepaid expenses", "1700"),
        "invest_sub:BRW-US": ("15100", "Investment in Brightwater Instruments", "1200"),
        "invest_sub:KIS-JP": ("15200", "Investment in Kisaragi Sensors", "1200"),
        "ap_ext": ("20100", "Accounts payable", "2400"),
        "ap_ic": ("20500", "Intercompany payable", "2450"),
        "accruals": ("21000", "Accrued liabilities", "2600"),
        "tax_payable": ("22000", "Income taxes payable", "2500"),
        "div_pay_ic": ("23000", "Dividends payable to parent", "2550"),
        "div_pay_ext": ("23100", "Dividends payable to minority holders", "2560"),
        "loan_ic_borrow": ("25000", "Loan payable to parent EUR", "2100"),
        "share_capital": ("30100", "Common stock", "3000"),
        "share_premium": ("30200", "Additional paid-in capital", "3100"),
        "retained": ("31000", "Retained earnings", "3200"),
        "fee_income": ("40500", "Service fee income from affiliates", "4500"),
        "wages": ("60100", "Salaries", "6000"),
        "social": ("60200", "Payroll taxes and benefits", "6000"),
        "rent": ("61000", "Rent", "6200"),
        "opex": ("62000", "Professional fees and other", "6200"),
        "fee_expense": ("65000", "Management fees parent", "6300"),
        "int_exp_ic": ("70100", "Interest expense intercompany", "7100"),
        "fx_gain": ("71000", "Foreign exchange gain", "7300"),
        "fx_loss": ("71100", "Foreign exchange loss", "7350"),
        "tax": ("80000", "Income tax expense", "8000"),
    },
    "BRW-US": {  # segmented account-subaccount
        "cash": ("1010-100", "Cash operating account", "1800"),
        "cash2": ("1010-200", "Cash payroll account", "1800"),
        "ar_ext": ("1200-100", "Accounts receivable trade", "1600"),
        "ar_ic": ("1250-100", "Due from affiliates", "1650"),
        "inventory": ("1300-200", "Inventory finished goods", "1500"),
        "other_recv": ("1400-100", "Prepaid expenses", "1700"),
        "ppe_cost": ("1500-100", "Machinery and equipment", "1000"),
        "ppe_accdep": ("1500-900", "Accumulated depreciation", "1000"),
        "ppe_reval": ("1500-050", "Land revaluation", "1000"),
        "int_cost": ("1600-100", "Software and patents", "1050"),
        "int_accamort": ("1600-900", "Accumulated amortization", "1050"),
        "invest_sub": ("1700-100", "Investment in Brightwater Mexico", "1200"),
        "reval_oci": ("3950-100", "Land revaluation gain (OCI)", "9100"),
        "ap_ext": ("2000-100", "Accounts payable", "2400"),
        "ap_ic": ("2050-100", "Due to affiliates", "2450"),
        "accruals": ("2100-100", "Accrued expenses", "2600"),
        "tax_payable": ("2200-100", "Income tax payable", "2500"),
        "bank_loan": ("2500-100", "Term loan", "2000"),
        "share_capital": ("3000-100", "Common stock", "3000"),
        "share_premium": ("3100-100", "Additional paid-in capital", "3100"),
        "retained": ("3900-100", "Retained earnings", "3200"),
        "rev_ext": ("4000-100", "Sales domestic", "4000"),
        "rev_ext2": ("4000-200", "Sales export", "4000"),
        "rev_ic": ("4100-100", "Sales to affiliates", "4100"),
        "cogs_purch": ("5000-100", "Materials and production cost", "5000"),
        "stock_change": ("5000-900", "Inventory change", "5000"),
        "ic_purch": ("5100-100", "Purchases from affiliates", "5100"),
        "wages": ("6000-100", "Salaries and wages", "6000"),
        "social": ("6000-200", "Payroll taxes and benefits", "6000"),
        "depr": ("6100-100", "Depreciation", "6100"),
        "amort": ("6100-200", "Amortization", "6100"),
        "rent": ("6200-100", "Rent and occupancy", "6200"),
        "opex": ("6200-900", "Other SG and A", "6200"),
        "fee_expense": ("6300-100", "Management fees affiliates", "6300"),
        "int_exp_bank": ("7200-100", "Interest expense term loan", "7200"),
        "fx_gain": ("7300-100", "Foreign exchange gain", "7300"),
        "fx_loss": ("7300-200", "Foreign exchange loss", "7350"),
        "tax": ("8000-100", "Income tax expense", "8000"),
    },
    "BRW-MX": {  # three digits and sub-account
        "cash": ("102-001", "Bancos nacionales", "1800"),
        "ar_ext": ("105-001", "Clientes nacionales", "1600"),
        "inventory": ("115-001", "Inventario de mercancías", "1500"),
        "other_recv": ("120-001", "Pagos anticipados", "1700"),
        "ppe_cost": ("151-001", "Maquinaria y equipo", "1000"),
        "ppe_accdep": ("171-001", "Depreciación acumulada de maquinaria", "1000"),
        "ap_ext": ("201-001", "Proveedores nacionales", "2400"),
        "ap_ic": ("201-002", "Proveedores partes relacionadas", "2450"),
        "accruals": ("205-001", "Acreedores diversos", "2600"),
        "tax_payable": ("213-001", "ISR por pagar", "2500"),
        "share_capital": ("301-001", "Capital social", "3000"),
        "share_premium": ("302-001", "Prima en suscripción de acciones", "3100"),
        "retained": ("304-001", "Resultados de ejercicios anteriores", "3200"),
        "rev_ext": ("401-001", "Ventas nacionales", "4000"),
        "cogs_purch": ("501-001", "Compras nacionales", "5000"),
        "ic_purch": ("502-001", "Compras a partes relacionadas", "5100"),
        "stock_change": ("503-001", "Variación de inventarios", "5000"),
        "wages": ("601-001", "Sueldos y salarios", "6000"),
        "social": ("601-002", "Cuotas de seguridad social", "6000"),
        "rent": ("602-001", "Arrendamiento", "6200"),
        "opex": ("603-001", "Gastos generales", "6200"),
        "depr": ("604-001", "Depreciación", "6100"),
        "fee_expense": ("605-001", "Honorarios corporativos", "6300"),
        "fx_gain": ("701-001", "Utilidad cambiaria", "7300"),
        "fx_loss": ("702-001", "Pérdida cambiaria", "7350"),
        "tax": ("801-001", "ISR del ejercicio", "8000"),
    },
    "KIS-JP": {  # letter prefix, four digits
        "cash": ("J-1110", "普通預金", "1800"),
        "cash2": ("J-1120", "定期預金", "1800"),
        "ar_ext": ("J-1310", "売掛金", "1600"),
        "ar_ic": ("J-1320", "関係会社売掛金", "1650"),
        "inventory": ("J-1410", "製品", "1500"),
        "other_recv": ("J-1510", "前払費用", "1700"),
        "ppe_cost": ("J-1710", "機械装置", "1000"),
        "ppe_accdep": ("J-1719", "減価償却累計額", "1000"),
        # Intangibles written off directly (no accumulated amortisation account).
        "int_cost": ("J-1810", "ソフトウェア", "1050"),
        "int_accamort": ("J-1810", "ソフトウェア", "1050"),
        "ap_ext": ("J-2110", "買掛金", "2400"),
        "ap_ic": ("J-2120", "関係会社買掛金", "2450"),
        "accruals": ("J-2210", "未払費用", "2600"),
        "bonus_accrual": ("J-2220", "賞与引当金", "2600"),
        "tax_payable": ("J-2310", "未払法人税等", "2500"),
        "bank_loan": ("J-2510", "長期借入金", "2000"),
        "share_capital": ("J-3110", "資本金", "3000"),
        "share_premium": ("J-3120", "資本準備金", "3100"),
        "retained": ("J-3310", "繰越利益剰余金", "3200"),
        "rev_ext": ("J-4010", "国内売上高", "4000"),
        "rev_ext2": ("J-4020", "輸出売上高", "4000"),
        "rev_ic": ("J-4030", "関係会社売上高", "4100"),
        "cogs_purch": ("J-5010", "材料仕入高", "5000"),
        "stock_change": ("J-5090", "棚卸資産増減", "5000"),
        "wages": ("J-6010", "給料手当", "6000"),
        "social": ("J-6020", "法定福利費", "6000"),
        "bonus": ("J-6030", "賞与引当金繰入額", "6000"),
        "depr": ("J-6110", "減価償却費", "6100"),
        "amort": ("J-6120", "ソフトウェア償却", "6100"),
        "rent": ("J-6210", "地代家賃", "6200"),
        "opex": ("J-6290", "雑費", "6200"),
        "fee_expense": ("J-6310", "経営指導料", "6300"),
        "int_exp_bank": ("J-7110", "支払利息", "7200"),
        "fx_gain": ("J-7210", "為替差益", "7300"),
        "fx_loss": ("J-7220", "為替差損", "7350"),
        "tax": ("J-8010", "法人税等", "8000"),
    },
    "GLF-BH": {  # class letter and four digits
        "cash": ("A1010", "Bank current account", "1800"),
        "ar_ext": ("A1200", "Trade debtors", "1600"),
        "inventory": ("A1400", "Stock in trade", "1500"),
        "other_recv": ("A1500", "Prepayments and deposits", "1700"),
        "ppe_cost": ("A1700", "Furniture and equipment", "1000"),
        "ppe_accdep": ("A1790", "Accumulated depreciation furniture and equipment", "1000"),
        "ap_ext": ("L2010", "Trade creditors", "2400"),
        "ap_ic": ("L2050", "Due to related parties", "2450"),
        "accruals": ("L2100", "Accrued expenses", "2600"),
        "share_capital": ("E3010", "Share capital", "3000"),
        "retained": ("E3030", "Retained earnings", "3200"),
        "rev_ext": ("R4010", "Sales", "4000"),
        "cogs_purch": ("X5010", "Cost of goods purchased", "5000"),
        "stock_change": ("X5090", "Stock adjustment", "5000"),
        "wages": ("X6010", "Salaries and allowances", "6000"),
        "social": ("X6020", "Social insurance contributions", "6000"),
        "depr": ("X6110", "Depreciation", "6100"),
        "rent": ("X6210", "Rent", "6200"),
        "opex": ("X6290", "General and administrative expenses", "6200"),
        "fee_expense": ("X6310", "Head office management fee", "6300"),
        "fx_gain": ("X7210", "Exchange gain or loss", "7350"),
        "fx_loss": ("X7210", "Exchange gain or loss", "7350"),
    },
    "NRD-SE": {  # BAS-style four digits
        "int_cost": ("1010", "Balanserade utgifter för utvecklingsarbeten", "1050"),
        "int_accamort": ("1019", "Ackumulerade avskrivningar på balanserade utgifter", "1050"),
        "ppe_cost": ("1220", "Inventarier och verktyg", "1000"),
        "ppe_accdep": ("1229", "Ackumulerade avskrivningar på inventarier", "1000"),
        "inventory": ("1460", "Lager av handelsvaror", "1500"),
        "ar_ext": ("1510", "Kundfordringar", "1600"),
        "other_recv": ("1710", "Förutbetalda kostnader", "1700"),
        "cash": ("1930", "Företagskonto", "1800"),
        "cash2": ("1940", "Övriga bankkonton", "1800"),
        "share_capital": ("2081", "Aktiekapital", "3000"),
        "share_premium": ("2097", "Överkursfond", "3100"),
        "retained": ("2091", "Balanserad vinst eller förlust", "3200"),
        "ap_ext": ("2440", "Leverantörsskulder", "2400"),
        "ap_ic": ("2460", "Leverantörsskulder till koncernföretag", "2450"),
        "tax_payable": ("2510", "Skatteskulder", "2500"),
        "div_pay_ic": ("2898", "Outtagen vinstutdelning", "2550"),
        "accruals": ("2990", "Övriga upplupna kostnader", "2600"),
        "rev_ext": ("3010", "Försäljning varor", "4000"),
        "rev_ext2": ("3105", "Försäljning varor till land utanför EU", "4000"),
        "fx_gain": ("3960", "Valutakursvinster rörelsen", "7300"),
        "cogs_purch": ("4010", "Inköp varor och material", "5000"),
        "stock_change": ("4990", "Förändring av lager", "5000"),
        "rent": ("5010", "Lokalhyra", "6200"),
        "fee_expense": ("6580", "Management fee moderbolag", "6300"),
        "opex": ("6990", "Övriga externa kostnader", "6200"),
        "wages": ("7010", "Löner till kollektivanställda", "6000"),
        "social": ("7510", "Arbetsgivaravgifter", "6000"),
        "amort": ("7810", "Avskrivningar på immateriella tillgångar", "6100"),
        "depr": ("7832", "Avskrivningar på inventarier och verktyg", "6100"),
        "fx_loss": ("7960", "Valutakursförluster rörelsen", "7350"),
        "tax": ("8910", "Skatt som belastar årets resultat", "8000"),
    },
    "HEL-CH": {  # Swiss SME-style four digits
        "cash": ("1020", "Bankguthaben", "1800"),
        "ar_ext": ("1100", "Forderungen aus Lieferungen und Leistungen", "1600"),
        "inventory": ("1200", "Warenvorräte", "1500"),
        "other_recv": ("1300", "Aktive Rechnungsabgrenzungen", "1700"),
        "ppe_cost": ("1500", "Maschinen und Apparate", "1000"),
        "ppe_accdep": ("1509", "Wertberichtigung Maschinen und Apparate", "1000"),
        "ap_ext": ("2000", "Verbindlichkeiten aus Lieferungen und Leistungen", "2400"),
        "accruals": ("2300", "Passive Rechnungsabgrenzungen", "2600"),
        "tax_payable": ("2340", "Rückstellungen für Steuern", "2500"),
        "bank_loan": ("2450", "Darlehen Bank", "2000"),
        "share_capital": ("2800", "Aktienkapital", "3000"),
        "share_premium": ("2900", "Gesetzliche Kapitalreserven", "3100"),
        "retained": ("2970", "Gewinnvortrag", "3200"),
        "rev_ext": ("3200", "Handelserlöse", "4000"),
        "cogs_purch": ("4200", "Warenaufwand", "5000"),
        "stock_change": ("4290", "Bestandesänderung Warenvorräte", "5000"),
        "wages": ("5000", "Lohnaufwand", "6000"),
        "social": ("5700", "Sozialversicherungsaufwand", "6000"),
        "rent": ("6000", "Raumaufwand", "6200"),
        "opex": ("6500", "Verwaltungsaufwand", "6200"),
        "depr": ("6800", "Abschreibungen", "6100"),
        "int_exp_bank": ("6900", "Finanzaufwand", "7200"),
        "tax": ("8900", "Direkte Steuern", "8000"),
    },
    "WSL-PL": {  # three digits and analytic suffix
        "ppe_cost": ("010-01", "Środki trwałe", "1000"),
        "ppe_accdep": ("070-01", "Umorzenie środków trwałych", "1000"),
        "cash": ("130-01", "Rachunek bieżący", "1800"),
        "ar_ext": ("200-01", "Rozrachunki z odbiorcami", "1600"),
        "ar_ic": ("200-05", "Rozrachunki z odbiorcami powiązanymi", "1650"),
        "ap_ext": ("201-01", "Rozrachunki z dostawcami", "2400"),
        "ap_ic": ("201-05", "Rozrachunki z dostawcami powiązanymi", "2450"),
        "tax_payable": ("220-02", "Rozrachunki z urzędem skarbowym CIT", "2500"),
        "accruals": ("230-01", "Rozrachunki z tytułu wynagrodzeń", "2600"),
        "inventory": ("310-01", "Materiały i wyroby", "1500"),
        "depr": ("400-01", "Amortyzacja", "6100"),
        "cogs_purch": ("401-01", "Zużycie materiałów", "5000"),
        "opex": ("402-01", "Usługi obce", "6200"),
        "rent": ("402-02", "Najem", "6200"),
        "fee_expense": ("402-05", "Opłaty za zarządzanie grupa", "6300"),
        "wages": ("404-01", "Wynagrodzenia", "6000"),
        "social": ("405-01", "Ubezpieczenia społeczne", "6000"),
        "stock_change": ("409-01", "Zmiana stanu zapasów", "5000"),
        "other_recv": ("640-01", "Rozliczenia międzyokresowe kosztów", "1700"),
        "rev_ext": ("700-01", "Przychody ze sprzedaży produktów", "4000"),
        "rev_ic": ("700-05", "Przychody ze sprzedaży jednostki powiązane", "4100"),
        "fx_gain": ("750-01", "Dodatnie różnice kursowe", "7300"),
        "fx_loss": ("751-01", "Ujemne różnice kursowe", "7350"),
        "share_capital": ("801-01", "Kapitał zakładowy", "3000"),
        "retained": ("820-01", "Zysk z lat ubiegłych", "3200"),
        "tax": ("870-01", "Podatek dochodowy", "8000"),
    },
}

# ---------------------------------------------------------------------------------------
# Operating parameters per entity (functional currency, per month)
# ---------------------------------------------------------------------------------------

P = {
    "ALD-NL": dict(rev=D("520000"), rev2_share=D("0.30"), cogs_ratio=D("0.42"), staff=D("290000"),
                   rent=D("38000"), opex=D("74000"), depr=D("25000"), amort=D("8000"),
                   capex={3: D("120000"), 9: D("80000")}, ar_factor=D("1.5"), ap_factor=D("1.0"),
                   inv_factor=None, tax_rate=D("0.258"),
                   open=dict(cash=D("6500000"), cash2=D("2000000"), other_recv=D("240000"),
                             ppe_cost=D("4000000"), ppe_accdep=D("-1550000"),
                             int_cost=D("1100000"), int_accamort=D("-480000"),
                             accruals=D("-310000"), tax_payable=D("-180000"),
                             share_capital=D("-25000000"), share_premium=D("-18000000")),
                   hist=dict(share_capital=D("1"), share_premium=D("1"), retained=D("1"))),
    "ALD-UK": dict(rev=D("1180000"), rev2_share=D("0.15"), cogs_ratio=D("0.11"), staff=D("175000"),
                   rent=D("26000"), opex=D("52000"), depr=D("14000"), amort=D("3000"),
                   capex={3: D("60000"), 9: D("45000")}, ar_factor=D("1.5"), ap_factor=D("1.0"),
                   inv_factor=D("1.45"), tax_rate=D("0.25"),
                   open=dict(cash=D("1900000"), cash2=D("500000"), other_recv=D("85000"),
                             ppe_cost=D("900000"), ppe_accdep=D("-380000"),
                             int_cost=D("120000"), int_accamort=D("-60000"),
                             accruals=D("-140000"), tax_payable=D("-95000"),
                             share_capital=D("-3000000"), share_premium=D("-1500000")),
                   hist=dict(share_capital=D("0.8600"), share_premium=D("0.8600"), retained=D("0.8550"))),
    "ALD-US": dict(rev=D("0"), staff=D("68000"), rent=D("9000"), opex=D("20000"), depr=D("0"),
                   amort=D("0"), capex={}, ar_factor=D("0"), ap_factor=D("1.0"), inv_factor=None,
                   tax_rate=D("0.21"), tax_prior_year_only=True,
                   open=dict(cash=D("5200000"), other_recv=D("30000"),
                             accruals=D("-60000"), tax_payable=D("-40000"),
                             share_capital=D("-10000000"), share_premium=D("-14000000")),
                   hist=dict(share_capital=D("1.1000"), share_premium=D("1.1000"), retained=D("1.1200"))),
    "BRW-US": dict(rev=D("3450000"), rev2_share=D("0.22"), cogs_ratio=D("0.50"), ic_cogs_ratio=D("0.80"),
                   staff=D("610000"), rent=D("85000"), opex=D("160000"), depr=D("118000"), amort=D("12000"),
                   capex={3: D("900000"), 9: D("650000")}, ar_factor=D("1.5"), ap_factor=D("1.0"),
                   inv_factor=D("1.5"), tax_rate=D("0.25"), bank_loan=D("8000000"), bank_rate=D("0.06"),
                   open=dict(cash=D("6500000"), cash2=D("350000"), other_recv=D("300000"),
                             ppe_cost=D("14000000"), ppe_accdep=D("-5500000"),
                             int_cost=D("900000"), int_accamort=D("-400000"),
                             accruals=D("-450000"), tax_payable=D("-300000"),
                             share_capital=D("-2000000"), share_premium=D("-11000000")),
                   hist=dict(share_capital=D("1.1100"), share_premium=D("1.1100"), retained=D("1.1050"))),
    "BRW-MX": dict(rev=D("10600000"), rev2_share=D("0"), cogs_ratio=D("0.10"), staff=D("1250000"),
                   rent=D("240000"), opex=D("380000"), depr=D("190000"), amort=D("0"),
                   capex={3: D("1200000"), 9: D("800000")}, ar_factor=D("1.5"), ap_factor=D("1.0"),
                   inv_factor=D("1.4"), tax_rate=D("0.30"),
                   open=dict(cash=D("8500000"), other_recv=D("600000"),
                             ppe_cost=D("9000000"), ppe_accdep=D("-3200000"),
                             accruals=D("-900000"), tax_payable=D("-800000"),
                             share_capital=D("-20000000"), share_premium=D("-5000000")),
                   hist=dict(share_capital=D("21.5000"), share_premium=D("21.5000"), retained=D("21.1000"))),
    "KIS-JP": dict(rev=D("560000000"), rev2_share=D("0.40"), cogs_ratio=D("0.58"), ic_cogs_ratio=D("0.70"),
                   staff=D("98000000"), bonus=D("32000000"), rent=D("14000000"), opex=D("28000000"),
                   depr=D("17000000"), amort=D("2500000"),
                   capex={3: D("140000000"), 9: D("90000000")}, ar_factor=D("1.6"), ap_factor=D("1.0"),
                   inv_factor=D("1.5"), tax_rate=D("0.306"), bank_loan=D("600000000"), bank_rate=D("0.012"),
                   open=dict(cash=D("1450000000"), cash2=D("300000000"), other_recv=D("45000000"),
                             ppe_cost=D("2400000000"), ppe_accdep=D("-950000000"),
                             int_cost=D("45000000"),
                             accruals=D("-120000000"), tax_payable=D("-95000000"),
                             share_capital=D("-400000000"), share_premium=D("-600000000")),
                   hist=dict(share_capital=D("128.50"), share_premium=D("128.50"), retained=D("140.20"))),
    "GLF-BH": dict(rev=D("310000"), rev2_share=D("0"), cogs_ratio=D("0.62"), staff=D("44000"),
                   rent=D("8500"), opex=D("12500"), depr=D("5500"), amort=D("0"),
                   capex={9: D("30000")}, ar_factor=D("1.5"), ap_factor=D("1.0"),
                   inv_factor=D("1.3"), tax_rate=D("0"),
                   open=dict(cash=D("420000"), other_recv=D("18000"),
                             ppe_cost=D("180000"), ppe_accdep=D("-60000"),
                             accruals=D("-35000"), share_capital=D("-250000"))),
    "NRD-SE": dict(rev=D("14200000"), rev2_share=D("0.12"), cogs_ratio=D("0.54"), staff=D("3550000"),
                   rent=D("420000"), opex=D("760000"), depr=D("330000"), amort=D("60000"),
                   capex={3: D("1500000"), 9: D("900000")}, ar_factor=D("1.4"), ap_factor=D("1.0"),
                   inv_factor=D("1.3"), tax_rate=D("0.206"),
                   open=dict(cash=D("22000000"), cash2=D("5000000"), other_recv=D("1100000"),
                             ppe_cost=D("26000000"), ppe_accdep=D("-11000000"),
                             int_cost=D("3000000"), int_accamort=D("-1200000"),
                             accruals=D("-2600000"), tax_payable=D("-1300000"),
                             share_capital=D("-5000000"), share_premium=D("-30000000")),
                   hist=dict(share_capital=D("9.1500"), share_premium=D("9.1500"), retained=D("10.6500"))),
    "HEL-CH": dict(rev=D("2350000"), rev2_share=D("0"), cogs_ratio=D("0.50"), staff=D("680000"),
                   rent=D("95000"), opex=D("145000"), depr=D("78000"), amort=D("0"),
                   capex={3: D("300000"), 9: D("250000")}, ar_factor=D("1.4"), ap_factor=D("1.0"),
                   inv_factor=D("1.3"), tax_rate=D("0.14"), bank_loan=D("1500000"), bank_rate=D("0.025"),
                   open=dict(cash=D("3100000"), other_recv=D("200000"),
                             ppe_cost=D("5200000"), ppe_accdep=D("-2100000"),
                             accruals=D("-500000"), tax_payable=D("-250000"),
                             share_capital=D("-2000000"), share_premium=D("-1000000")),
                   hist=dict(share_capital=D("1.1200"), share_premium=D("1.1200"), retained=D("1.0400"))),
    "WSL-PL": dict(rev=D("3600000"), rev2_share=D("0"), cogs_ratio=D("0.60"), ic_cogs_ratio=D("0.85"),
                   staff=D("880000"), rent=D("95000"), opex=D("195000"), depr=D("115000"), amort=D("0"),
                   capex={3: D("700000"), 9: D("500000")}, ar_factor=D("1.5"), ap_factor=D("1.0"),
                   inv_factor=D("1.4"), tax_rate=D("0.19"),
                   open=dict(cash=D("4200000"), other_recv=D("300000"),
                             ppe_cost=D("12000000"), ppe_accdep=D("-4500000"),
                             accruals=D("-700000"), tax_payable=D("-250000"),
                             share_capital=D("-12000000")),
                   hist=dict(share_capital=D("4.5500"), retained=D("4.4500"))),
}
# GLF-BH joins the group on 2026-04-01: its opening equity had no earlier group close, so
# it is carried at the closing rate of 2025-12 (translation reserve brought forward zero).
P["GLF-BH"]["hist"] = dict(share_capital=RATES["BHD"][OPENING_PERIOD]["closing"],
                           retained=RATES["BHD"][OPENING_PERIOD]["closing"])

# Seasonality of sales: one factor per calendar month (mean 1), plus a small wobble per
# entity so the entities do not move in lockstep.
SEASON = [D(x) for x in "0.90 0.94 1.04 0.98 1.02 1.06 0.92 0.86 1.05 1.08 1.04 1.11".split()]


def season(entity: str, month: int) -> Decimal:
    k = ENTITY_INDEX[entity]
    return SEASON[month - 1] + D((month * 7 + k * 3) % 5 - 2) / D(100)


# Slow growth of inventory levels over the year (no seasonality: keeps margins steady).
def inventory_drift(month_index: int) -> Decimal:
    return 1 + D("0.004") * month_index


# ---------------------------------------------------------------------------------------
# Intercompany flows
# ---------------------------------------------------------------------------------------

MGMT_FEES_EUR = {  # charged monthly by ALD-NL, in EUR
    "ALD-UK": D("24000.00"), "ALD-US": D("25000.00"), "BRW-US": D("45000.00"),
    "BRW-MX": D("12000.00"), "KIS-JP": D("30000.00"), "GLF-BH": D("10000.00"),
    "NRD-SE": D("16500.00"), "WSL-PL": D("9500.00"),
}
GLF_JOINS = "2026-04"  # first period GLF-BH is a group entity (holding valid from 2026-04-01)
GOODS_FLOWS = [
    # seller, buyer, invoice currency, monthly base amount
    ("BRW-US", "ALD-UK", "USD", D("690000")),
    ("BRW-US", "BRW-MX", "USD", D("310000")),
    ("KIS-JP", "BRW-US", "USD", D("205000")),
    ("WSL-PL", "ALD-UK", "EUR", D("118000")),
]
ALD_US_SERVICE_FEE = D("275000.00")  # ALD-US charges BRW-US monthly, USD

LOAN_EUR = D("20000000.00")  # ALD-NL to ALD-US, EUR, 4.00% a year, interest paid monthly
LOAN_RATE = D("0.04")
LOAN_REPAYMENT = ("2026-06", D("2000000.00"))  # repaid on 2026-06-30
ACQ_LOAN = ("2026-04", D("3000000.00"), D("0.045"))  # ALD-NL bank loan to fund GLF-BH
GLF_CONSIDERATION = D("2700000.00")  # paid by ALD-NL on 2026-04-01 for 45% more (control)
GLF_HELD_COST = D("600000.00")  # ALD-NL's 15% bought in 2023, an investment at cost
GLF_HELD_FAIR_VALUE = D("900000.00")  # the 15% at 2026-04-01: 15/60 of the price paid

# Investments at cost in the investor's books (investor currency). The founded or
# capitalised subsidiaries carry exactly their share of share capital and premium at the
# historical rate; acquired ones carry the price paid.
def historical_eur(entity: str, key: str) -> Decimal:
    amount = -P[entity]["open"].get(key, D(0))
    if not amount:
        return D(0)
    return q(amount / P[entity]["hist"][key], "EUR")


def investments() -> list[tuple[str, str, str, Decimal]]:
    sc_sp = lambda e: historical_eur(e, "share_capital") + historical_eur(e, "share_premium")
    return [
        ("ALD-NL", "ALD-UK", "invest_sub", sc_sp("ALD-UK")),
        ("ALD-NL", "ALD-US", "invest_sub", q(D("0.80") * sc_sp("ALD-US"), "EUR")),
        ("ALD-NL", "KIS-JP", "invest_sub", D("2350000.00")),
        ("ALD-NL", "NRD-SE", "invest_sub", sc_sp("NRD-SE")),
        ("ALD-NL", "HEL-CH", "invest_assoc", D("3100000.00")),
        ("ALD-NL", "GLF-BH", "invest_sub", GLF_HELD_COST),
        # WSL-PL's capital at the 2021 rate of 0.8580 GBP per EUR.
        ("ALD-UK", "WSL-PL", "invest_sub", q(sc_sp("WSL-PL") * D("0.8580"), "GBP")),
        ("ALD-US", "BRW-US", "invest_sub", D("26000000.00")),
        ("ALD-US", "KIS-JP", "invest_sub", D("19500000.00")),
        ("BRW-US", "BRW-MX", "invest_sub", D("1650000.00")),
    ]


class Invoice:
    """One intercompany invoice (or an aggregate of one month's invoices of one flow)."""

    def __init__(self, seller, buyer, kind, ccy, amount, period, *, buyer_amount=None,
                 buyer_period="same", buyer_rate=None, ref="", unpaid=False):
        self.seller, self.buyer, self.kind, self.ccy = seller, buyer, kind, ccy
        self.amount = q(amount, ccy)
        self.buyer_amount = self.amount if buyer_amount is None else q(buyer_amount, ccy)
        self.seller_period = period
        self.buyer_period = period if buyer_period == "same" else buyer_period
        # Paid in the month after the buyer booked it (30 days), if inside the demo year.
        self.pay_period = next_period(self.buyer_period) if self.buyer_period and not unpaid else None
        self.buyer_rate = buyer_rate  # functional units per unit of ccy, when overridden
        self.ref = ref


# The deliberate differences (see docs/demo.md). Everything else agrees exactly in the
# transaction currency.
DELIBERATE = dict(
    timing_dec=dict(seller="BRW-US", buyer="ALD-UK", period="2026-12", amount=D("96800.00"),
                    ref="BRW-INV-26-12-0877 dated 2026-12-30 goods in transit"),
    timing_jun=dict(seller="BRW-US", buyer="BRW-MX", period="2026-06", booked="2026-07",
                    amount=D("38500.00"), ref="BRW-INV-26-06-0412 dated 2026-06-29 booked by BRW-MX 2026-07-02"),
    dispute=dict(seller="KIS-JP", buyer="BRW-US", period="2026-12", amount=D("212400.00"),
                 buyer_amount=D("208900.00"), ref="KIS-26-1207 price dispute"),
    # NRD-SE's last month in the group; the invoice stays unpaid (the buyer disputes the
    # recharge after the sale): a receivable from a third party from 2026-10-01.
    fee_small=dict(buyer="NRD-SE", period="2026-09", buyer_amount=D("16490.40")),
    fx_fee=dict(buyer="ALD-UK", period="2026-12", buyer_rate=D("0.8400")),
    fx_loan=dict(entity="ALD-US", period="2026-08", rate_period="2026-07"),
)


def in_bhd(eur: Decimal) -> Decimal:
    """A euro amount of GLF-BH's acquisition in BHD at the 2026-03 closing rate, as
    acquisitions.csv has it."""
    x = eur * rate("BHD", "2026-03", "closing")
    assert x == q(x, "BHD"), x
    return x


def nrd_sale_consideration() -> Decimal:
    """The proceeds of NRD-SE in its own currency (ownership_changes.csv), at the closing
    rate of its last month end consolidated, which tessera translates back exactly."""
    x = NRD_SALE["proceeds"] * rate("SEK", NRD_SALE["last"], "closing")
    assert x == q(x, "SEK"), x
    return x


def build_invoices() -> list[Invoice]:
    inv: list[Invoice] = []
    for period in ALL_PERIODS:
        m = month_of(period)
        for seller, buyer, ccy, base in GOODS_FLOWS:
            amount = base * season(seller, m) * (1 + D(ENTITY_INDEX[buyer]) / 1000)
            if period == DELIBERATE["dispute"]["period"] and seller == "KIS-JP":
                d = DELIBERATE["dispute"]  # an extra rush order on top of the regular flow
                inv.append(Invoice(seller, buyer, "sales", ccy, d["amount"], period,
                                   buyer_amount=d["buyer_amount"], ref=d["ref"]))
            inv.append(Invoice(seller, buyer, "sales", ccy, amount, period))
        for buyer, fee in MGMT_FEES_EUR.items():
            if buyer == "GLF-BH" and period < GLF_JOINS:
                continue
            if buyer == NRD_SALE["entity"] and period > NRD_SALE["last"]:
                continue
            kw = {}
            if period == DELIBERATE["fee_small"]["period"] and buyer == DELIBERATE["fee_small"]["buyer"]:
                kw["buyer_amount"] = DELIBERATE["fee_small"]["buyer_amount"]
                kw["unpaid"] = True
            if period == DELIBERATE["fx_fee"]["period"] and buyer == DELIBERATE["fx_fee"]["buyer"]:
                kw["buyer_rate"] = DELIBERATE["fx_fee"]["buyer_rate"]
            inv.append(Invoice("ALD-NL", buyer, "fees", "EUR", fee, period, **kw))
        inv.append(Invoice("ALD-US", "BRW-US", "fees", "USD", ALD_US_SERVICE_FEE, period))
    d = DELIBERATE["timing_dec"]
    inv.append(Invoice(d["seller"], d["buyer"], "sales", "USD", d["amount"], d["period"],
                       buyer_period=None, ref=d["ref"]))
    d = DELIBERATE["timing_jun"]
    inv.append(Invoice(d["seller"], d["buyer"], "sales", "USD", d["amount"], d["period"],
                       buyer_period=d["booked"], ref=d["ref"]))
    return inv


# ---------------------------------------------------------------------------------------
# Ledger
# ---------------------------------------------------------------------------------------

class Ledger:
    def __init__(self, entity: str):
        self.entity = entity
        self.ccy = CCY[entity]
        self.chart = CHARTS[entity]
        self.bal: dict[tuple[str, str, str], list[Decimal]] = {}
        self.mov: dict[tuple[str, str, str], list[Decimal]] = {}
        self.used_locals: set[str] = set()
        self.pl_month: dict[str, Decimal] = {}  # group account -> movement this month

    def resolve(self, sem: str, cp: str, tccy: str) -> tuple[str, str]:
        for cand in (f"{sem}:{cp}", f"{sem}:{tccy}", sem):
            if cand in self.chart:
                loc, _, grp = self.chart[cand]
                return loc, grp
        raise KeyError(f"{self.entity}: no local account for {sem} ({cp} {tccy})")

    def key(self, sem: str, cp: str = "", tccy: str = ""):
        if tccy == self.ccy:
            tccy = ""
        loc, grp = self.resolve(sem, cp, tccy)
        if ACC[grp]["ic_kind"]:
            assert cp and cp != self.entity and cp in CCY, (self.entity, sem, cp)
        else:
            assert not cp, (self.entity, sem, cp)
        return (loc, cp, tccy), grp

    def post(self, lines, memo=""):
        """lines: (sem, amount, counterparty, txn_currency, txn_amount)."""
        lines = [ln + ("", "", D(0))[len(ln) - 2:] if len(ln) < 5 else ln for ln in lines]
        lines = [ln for ln in lines if ln[1] != 0 or (ln[4] or 0) != 0]
        total = sum((ln[1] for ln in lines), D(0))
        assert total == 0, f"{self.entity} {memo}: entry does not balance ({total}) {lines}"
        for sem, amount, cp, tccy, tamt in lines:
            assert amount == q(amount, self.ccy), (self.entity, memo, sem, amount)
            k, grp = self.key(sem, cp or "", tccy or "")
            tamt = D(0) if not k[2] else tamt
            if k[2]:
                assert tamt == q(tamt, k[2]), (self.entity, memo, sem, tamt)
            for book in (self.bal, self.mov):
                row = book.setdefault(k, [D(0), D(0)])
                row[0] += amount
                row[1] += tamt
            self.used_locals.add(k[0])
            if ACC[grp]["statement"] == "profit_or_loss":
                self.pl_month[grp] = self.pl_month.get(grp, D(0)) + amount

    def balance(self, sem, cp="", tccy=""):
        k, _ = self.key(sem, cp, tccy)
        return tuple(self.bal.get(k, [D(0), D(0)]))

    def group_of(self, local: str) -> str:
        for loc, _, grp in self.chart.values():
            if loc == local:
                return grp
        raise KeyError(local)

    def sem_balance(self, sem):
        """Sum of the functional balances of every key of a semantic account."""
        locals_ = {v[0] for k, v in self.chart.items() if k == sem or k.startswith(sem + ":")}
        return sum((v[0] for k, v in self.bal.items() if k[0] in locals_), D(0))

    def fx_line(self, amount):
        """The P&L side of an exchange difference: credit = gain, debit = loss."""
        return ("fx_gain" if amount < 0 else "fx_loss", amount)

    def settle(self, sem, cp, tccy, txn_move, period, rate_kind="average", cash_sem="cash"):
        """Pays or collects txn_move (signed movement of the item, in its transaction
        currency) through cash; derecognises the carrying amount proportionally and books
        the realised exchange difference."""
        k, _ = self.key(sem, cp, tccy)
        if not k[2]:
            self.post([(sem, txn_move, cp), (cash_sem, -txn_move)], f"settle {sem} {cp}")
            return
        f_bal, t_bal = self.bal.get(k, [D(0), D(0)])
        assert t_bal != 0 and abs(txn_move) <= abs(t_bal), (self.entity, sem, cp, txn_move, t_bal)
        f = -f_bal if txn_move == -t_bal else q(f_bal * txn_move / t_bal, self.ccy)
        cash = -q(txn_move * cross(self.ccy, k[2], period, rate_kind), self.ccy)
        fx = -(f + cash)
        self.post([(sem, f, cp, k[2], txn_move), (cash_sem, cash), self.fx_line(fx)],
                  f"settle {sem} {cp} {k[2]}")

    def revalue(self, period, skip=(), rate_period=None):
        """Month-end revaluation of foreign-currency monetary items at the closing rate."""
        for k in sorted(self.bal):
            loc, cp, tccy = k
            if not tccy or self.group_of(loc) not in MONETARY or k in skip:
                continue
            f_bal, t_bal = self.bal[k]
            target = q(t_bal * cross(self.ccy, tccy, rate_period or period, "closing"), self.ccy)
            diff = target - f_bal
            if diff:
                sem = next(s for s, v in self.chart.items() if v[0] == loc)
                self.post([(sem, diff, cp, tccy, D(0)), self.fx_line(-diff)], f"revalue {k}")


# ---------------------------------------------------------------------------------------
# The year
# ---------------------------------------------------------------------------------------

def simulate():
    L = {e: Ledger(e) for e in CCY}
    invoices = build_invoices()
    opening: dict[str, dict] = {}
    ic_cost_ratio = {e: P[e].get("ic_cogs_ratio", D(0)) for e in CCY}

    def in_ccy(e, ccy, amount, period, kind="average", override=None):
        if ccy == CCY[e]:
            return q(amount, ccy)
        r = override if override is not None else cross(CCY[e], ccy, period, kind)
        return q(amount * r, CCY[e])

    def monthly_purchase_base(e):
        """Functional value of a normal month's goods bought (for inventory levels)."""
        p = P[e]
        base = p["rev"] * p["cogs_ratio"]
        for seller, buyer, ccy, amt in GOODS_FLOWS:
            if buyer == e:
                base += amt * cross(CCY[e], ccy, OPENING_PERIOD, "average")
            if seller == e:
                base += amt * cross(CCY[e], ccy, OPENING_PERIOD, "average") * ic_cost_ratio[e]
        return base

    # ---- opening balance sheet at 2026-01-01 ------------------------------------------
    for e, led in L.items():
        p, ccy = P[e], CCY[e]
        lines = [(k, q(v, ccy)) for k, v in p["open"].items()]
        s = season(e, 12)
        cons = D(0)
        if p["rev"]:
            lines.append(("ar_ext", q(p["ar_factor"] * p["rev"] * s, ccy)))
            cons = p["rev"] * s * p["cogs_ratio"]
        lines.append(("ap_ext", -q(p["ap_factor"] * (cons + p["opex"] + p["rent"]), ccy)))
        if p["inv_factor"]:
            lines.append(("inventory", q(p["inv_factor"] * monthly_purchase_base(e), ccy)))
        if p.get("bank_loan"):
            lines.append(("bank_loan", -q(p["bank_loan"], ccy)))
        if p.get("bonus"):
            lines.append(("bonus_accrual", -q(p["bonus"], ccy)))
        opening[e] = lines
    for owner, owned, sem, amount in investments():
        opening[owner].append((sem, amount, owned if sem == "invest_sub" else ""))
    opening["ALD-NL"].append(("loan_ic", LOAN_EUR, "ALD-US"))
    opening["ALD-US"].append(("loan_ic_borrow", -q(LOAN_EUR * rate("USD", OPENING_PERIOD, "closing"), "USD"),
                              "ALD-NL", "EUR", -LOAN_EUR))
    for inv in invoices:  # December 2025 invoices, open at the year end, at the closing rate
        if inv.seller_period != OPENING_PERIOD:
            continue
        opening[inv.seller].append(("ar_ic", in_ccy(inv.seller, inv.ccy, inv.amount, OPENING_PERIOD, "closing"),
                                    inv.buyer, inv.ccy, inv.amount))
        opening[inv.buyer].append(("ap_ic", -in_ccy(inv.buyer, inv.ccy, inv.buyer_amount, OPENING_PERIOD, "closing"),
                                   inv.seller, inv.ccy, -inv.buyer_amount))
    for e, lines in opening.items():
        lines = [ln + ("", "", D(0))[len(ln) - 2:] if len(ln) < 5 else ln for ln in lines]
        re = -sum((ln[1] for ln in lines), D(0))
        assert re < 0, f"{e}: opening retained earnings must be a credit ({re})"
        lines.append(("retained", re, "", "", D(0)))
        L[e].post(lines, "opening")
        L[e].mov = {}
    snapshots = {e: {OPENING_PERIOD: {k: list(v) for k, v in L[e].bal.items()}} for e in L}
    movements = {e: {} for e in L}
    fx_loan = DELIBERATE["fx_loan"]
    fx_fee = DELIBERATE["fx_fee"]

    for mi, period in enumerate(PERIODS, start=1):
        m = month_of(period)
        for led in L.values():
            led.mov = {}
            led.pl_month = {}

        # 1. settlements of last month's intercompany invoices
        pay: dict[tuple, Decimal] = {}
        for inv in invoices:
            if inv.pay_period != period:
                continue
            assert inv.amount == inv.buyer_amount, "only agreed invoices are paid in the year"
            pay[(inv.buyer, "ap_ic", inv.seller, inv.ccy)] = pay.get((inv.buyer, "ap_ic", inv.seller, inv.ccy), D(0)) + inv.amount
            pay[(inv.seller, "ar_ic", inv.buyer, inv.ccy)] = pay.get((inv.seller, "ar_ic", inv.buyer, inv.ccy), D(0)) - inv.amount
        for (e, sem, cp, ccy), t in sorted(pay.items()):
            L[e].settle(sem, cp, ccy, t, period)

        # 2. dividends paid
        for dv in DIVIDENDS:
            if dv["paid"] != period:
                continue
            payer = dv["payer"]
            ext = dv["total"]
            for pair, share in dv["shares"].items():
                receiver = pair.split("->")[1]
                amt = q(dv["total"] * share, CCY[payer])
                ext -= amt
                L[payer].settle("div_pay_ic", receiver, CCY[payer], amt, period)
                L[receiver].settle("div_recv", payer, CCY[payer], -amt, period)
            if ext:
                L[payer].post([("div_pay_ext", ext), ("cash", -ext)], "dividend paid outside")

        # 3. tax paid quarterly; KIS-JP summer and winter bonus paid
        for e, led in L.items():
            if P[e].get("tax_prior_year_only"):
                # Pays last year's tax with the April return; the year's accrual stays open.
                if m == 4:
                    t = q(P[e]["open"]["tax_payable"], CCY[e])
                    led.post([("tax_payable", -t), ("cash", t)], "prior-year tax paid")
            elif m in (3, 6, 9, 12):
                t = led.sem_balance("tax_payable")
                if t < 0:
                    led.post([("tax_payable", -t), ("cash", t)], "tax paid")
            if P[e].get("bonus") and m in (6, 12):
                b = led.sem_balance("bonus_accrual")
                led.post([("bonus_accrual", -b), ("cash", b)], "bonus paid")

        # 4. operations
        for e, led in L.items():
            p, ccy = P[e], CCY[e]
            s = season(e, m)
            if p["rev"]:
                rev = q(p["rev"] * s, ccy)
                rev2 = q(rev * p["rev2_share"], ccy)
                led.post([("ar_ext", rev), ("rev_ext", -(rev - rev2)), ("rev_ext2", -rev2)], "sales")
                cons = q(rev * p["cogs_ratio"], ccy)
                led.post([("cogs_purch", cons), ("ap_ext", -cons)], "materials")
            wages = q(p["staff"] * D("0.82") * (1 + D(mi - 1) / 400), ccy)
            social = q(p["staff"] * D("0.18") * (1 + D(mi - 1) / 400), ccy)
            led.post([("wages", wages), ("social", social), ("cash", -(wages + social))], "payroll")
            if p.get("bonus"):
                led.post([("bonus", q(p["bonus"], ccy)), ("bonus_accrual", -q(p["bonus"], ccy))], "bonus accrual")
            opex = q(p["opex"] * (1 + D((m * 3 + ENTITY_INDEX[e]) % 7 - 3) / 50), ccy)
            led.post([("rent", q(p["rent"], ccy)), ("opex", opex), ("ap_ext", -(q(p["rent"], ccy) + opex))], "opex")
            if p["depr"]:
                led.post([("depr", q(p["depr"], ccy)), ("ppe_accdep", -q(p["depr"], ccy))], "depreciation")
            if p["amort"]:
                led.post([("amort", q(p["amort"], ccy)), ("int_accamort", -q(p["amort"], ccy))], "amortisation")
            if m in p["capex"]:
                led.post([("ppe_cost", q(p["capex"][m], ccy)), ("cash", -q(p["capex"][m], ccy))], "capex")
            if (e, m) in REVALUATION:
                x = q(REVALUATION[(e, m)], ccy)
                led.post([("ppe_reval", x), ("reval_oci", -x)], "revaluation (IAS 16.39)")
            if p.get("bank_loan"):
                i = q(p["bank_loan"] * p["bank_rate"] / 12, ccy)
                led.post([("int_exp_bank", i), ("cash", -i)], "bank interest")

        # 5. intercompany invoices of the month
        for inv in invoices:
            if inv.seller_period == period:
                f = in_ccy(inv.seller, inv.ccy, inv.amount, period)
                rev_sem = "rev_ic" if inv.kind == "sales" else "fee_income"
                L[inv.seller].post([("ar_ic", f, inv.buyer, inv.ccy, inv.amount),
                                    (rev_sem, -f, inv.buyer, inv.ccy, -inv.amount)], f"invoice {inv.ref}")
                if inv.kind == "sales":
                    c = q(f * ic_cost_ratio[inv.seller], CCY[inv.seller])
                    L[inv.seller].post([("cogs_purch", c), ("ap_ext", -c)], "cost of goods sold to group")
            if inv.buyer_period == period:
                f = in_ccy(inv.buyer, inv.ccy, inv.buyer_amount, period, override=inv.buyer_rate)
                cost_sem = "ic_purch" if inv.kind == "sales" else "fee_expense"
                L[inv.buyer].post([(cost_sem, f, inv.seller, inv.ccy, inv.buyer_amount),
                                   ("ap_ic", -f, inv.seller, inv.ccy, -inv.buyer_amount)], f"invoice {inv.ref}")

        # 6. loan interest, acquisition, dividends declared
        principal = LOAN_EUR if period <= LOAN_REPAYMENT[0] else LOAN_EUR - LOAN_REPAYMENT[1]
        interest = q(principal * LOAN_RATE / 12, "EUR")
        L["ALD-NL"].post([("cash", interest), ("int_income_ic", -interest, "ALD-US")], "loan interest")
        i_usd = in_ccy("ALD-US", "EUR", interest, period)
        L["ALD-US"].post([("int_exp_ic", i_usd, "ALD-NL", "EUR", interest), ("cash", -i_usd)], "loan interest")
        if period == ACQ_LOAN[0]:
            L["ALD-NL"].post([("cash", ACQ_LOAN[1]), ("bank_loan", -ACQ_LOAN[1])], "acquisition loan drawn")
            L["ALD-NL"].post([("invest_sub", GLF_CONSIDERATION, "GLF-BH"), ("cash", -GLF_CONSIDERATION)],
                             "acquisition of 45% more of GLF-BH: control")
        if period == NRD_SALE["period"]:
            cost = L["ALD-NL"].balance("invest_sub", NRD_SALE["entity"])[0]
            gain = NRD_SALE["proceeds"] - cost
            L["ALD-NL"].post([("cash", NRD_SALE["proceeds"]), ("invest_sub", -cost, NRD_SALE["entity"]),
                              ("gain_disposal", -gain)], "sale of NRD-SE")
        if period >= ACQ_LOAN[0]:
            i = q(ACQ_LOAN[1] * ACQ_LOAN[2] / 12, "EUR")
            L["ALD-NL"].post([("int_exp_bank", i), ("cash", -i)], "acquisition loan interest")
        for dv in DIVIDENDS:
            if dv["period"] != period:
                continue
            payer, pccy = dv["payer"], CCY[dv["payer"]]
            lines = [("retained", dv["total"])]
            ext = dv["total"]
            for pair, share in dv["shares"].items():
                receiver = pair.split("->")[1]
                amt = q(dv["total"] * share, pccy)
                ext -= amt
                lines.append(("div_pay_ic", -amt, receiver))
                eur = q(amt / dv["rate"], CCY[receiver])  # booked at the declaration-date rate
                L[receiver].post([("div_recv", eur, payer, pccy, amt),
                                  ("div_income", -eur, payer, pccy, -amt)], "dividend declared")
            if ext:
                lines.append(("div_pay_ext", -ext))
            L[payer].post(lines, "dividend declared")

        # 7. external collections and payments, inventory count
        for e, led in L.items():
            p, ccy = P[e], CCY[e]
            if p["rev"]:
                s = season(e, m)
                target = q(p["ar_factor"] * p["rev"] * s, ccy)
                collect = led.sem_balance("ar_ext") - target
                assert collect >= 0, (e, period, "collections")
                led.post([("cash", collect), ("ar_ext", -collect)], "collections")
            ap = -led.sem_balance("ap_ext")
            if ap:
                month_purch = -led.mov.get(led.key("ap_ext")[0], [D(0)])[0]
                target = q(p["ap_factor"] * month_purch, ccy)
                payment = ap - target
                assert payment >= 0, (e, period, "supplier payments")
                led.post([("ap_ext", payment), ("cash", -payment)], "supplier payments")
            if p["inv_factor"]:
                target = q(p["inv_factor"] * monthly_purchase_base(e) * inventory_drift(mi), ccy)
                delta = target - led.sem_balance("inventory")
                led.post([("inventory", delta), ("stock_change", -delta)], "inventory count")

        # 8. month-end revaluation (with the deliberate slips)
        for e, led in L.items():
            skip, rate_period = (), None
            if e == fx_fee["buyer"] and period == fx_fee["period"]:
                # The December fee invoice was entered after the revaluation run.
                skip = (led.key("ap_ic", "ALD-NL", "EUR")[0],)
            if e == fx_loan["entity"] and period == fx_loan["period"]:
                rate_period = fx_loan["rate_period"]  # the August closing rate was not loaded
            led.revalue(period, skip=skip, rate_period=rate_period)

        # 9. loan repayment on 2026-06-30, at the closing rate
        if period == LOAN_REPAYMENT[0]:
            amt = LOAN_REPAYMENT[1]
            L["ALD-NL"].post([("cash", amt), ("loan_ic", -amt, "ALD-US")], "loan repaid")
            L["ALD-US"].settle("loan_ic_borrow", "ALD-NL", "EUR", amt, period, rate_kind="closing")

        # 10. income tax on the month's result
        for e, led in L.items():
            rate_ = P[e]["tax_rate"]
            if not rate_:
                continue
            pbt = -sum(led.pl_month.values(), D(0))
            # participation exemption on dividends and on the gain on a subsidiary sold
            exempt = -led.pl_month.get("7400", D(0)) - led.pl_month.get("7500", D(0))
            t = q((pbt - exempt) * rate_, CCY[e])
            led.post([("tax", t), ("tax_payable", -t)], "income tax accrual")

        # 11. checks and snapshots
        for e, led in L.items():
            assert sum((v[0] for v in led.mov.values()), D(0)) == 0
            assert led.sem_balance("cash") >= 0, (e, period, led.sem_balance("cash"))
            assert led.sem_balance("retained") < 0, (e, period)
            snapshots[e][period] = {k: list(v) for k, v in led.bal.items()}
            movements[e][period] = {k: list(v) for k, v in led.mov.items()}
    return L, invoices, snapshots, movements


# ---------------------------------------------------------------------------------------
# Writing
# ---------------------------------------------------------------------------------------

class Writer:
    def __init__(self, root):
        self.root = root
        self.written: list[str] = []

    def csv(self, rel, header, rows):
        for row in [header] + rows:
            for cell in row:
                assert not any(c in str(cell) for c in ',"\n\r'), (rel, cell)
                assert str(cell) == str(cell).strip(), (rel, cell)
        text = "".join(",".join(str(c) for c in row) + "\n" for row in [header] + rows)
        self.text(rel, text)

    def text(self, rel, text):
        path = os.path.join(self.root, rel)
        os.makedirs(os.path.dirname(path), exist_ok=True)
        with open(path, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
        self.written.append(rel)


def group_toml() -> str:
    a = ROLE_ACCOUNTS
    return f'''name = "Aldermoor Group"
parent = "ALD-NL"              # the ultimate parent entity
presentation_currency = "EUR"
fiscal_year_start = 1          # month the fiscal year starts, 1..12

[policies]
rounding = "half_away_from_zero"      # or "half_even": rounding of every translated line
income_translation = "periodic"       # or "year_to_date": see docs/translation.md
ifric16 = "direct"                    # or "step_by_step": indirect foreign operations
significant_influence = "0.20"        # voting share from which an investee is an associate

[accounts]                            # group accounts with a role in the close
retained_earnings = "{a['retained_earnings']}"
translation_reserve = "{a['translation_reserve']}"
translation_difference = "{a['translation_difference']}"
non_controlling_interest = "{a['non_controlling_interest']}"
goodwill = "{a['goodwill']}"
equity_investments = "{a['equity_investments']}"
equity_result = "{a['equity_result']}"
intercompany_difference = "{a['intercompany_difference']}"
inventory = "{a['inventory']}"
cost_of_sales = "{a['cost_of_sales']}"

[intercompany]
tolerance_absolute = "50.00"          # presentation currency
tolerance_relative = "0.001"          # of the larger side
timing_window_days = 5

[segments]                            # the segment report (IFRS 8): tessera segments
key = "business"                      # segment key shown without --by
revenue = "REV"                       # layout line ids or group accounts
profit = "OP"                         # the profit measure management reviews
depreciation = "6100"
interest_income = "7000"
interest_expense = "7100 7200"
tax = "TAX"
equity_result = "ASSOC"
assets = "TA"
liabilities = "NCL CL"
unallocated = ["Corporate"]           # segment values that are not operating segments
country_materiality = "0.10"          # foreign countries shown on their own from 10%

[plausibility]                        # warnings the close shows (docs/formats.md)
rate_move = "0.25"                    # a closing rate moving more than 25% in a month
sign_months = 2                       # earlier months agreeing on the sign of income
'''


def tb_rows(entity, book, period=None, with_presentation=False, keys=None):
    """Rows of one delivery. A movements delivery leaves out keys that did not move; a
    balances delivery (keys given) keeps every key seen so far, zero balances included."""
    ccy = CCY[entity]
    rows = []
    for k in sorted(keys if keys is not None else book):
        amount, tamt = book.get(k, [D(0), D(0)])
        if keys is None and amount == 0 and tamt == 0:
            continue
        loc, cp, tccy = k
        row = ([period] if period else []) + [loc, fmt(amount, ccy), cp, tccy,
                                              fmt(tamt, tccy) if tccy else ""]
        if with_presentation:
            grp = LEDGERS[entity].group_of(loc)
            if ACC[grp]["basis"] == "historical":
                key = next(s for s, v in CHARTS[entity].items() if v[0] == loc)
                row.append(fmt(amount / P[entity]["hist"][key], "EUR", exact=False))
            else:
                row.append("")
        rows.append(row)
    assert sum((D(r[2 if period else 1]) for r in rows), D(0)) == 0, (entity, period)
    return rows


def prior_year(entity, opening_2026):
    """The fiscal year 2025 of one entity: twelve months of plain trading (sales, cost of
    sales, staff, rent, other expenses, all settled in cash; no intercompany flows, no
    dividends), and the 2025 opening worked back from the 2026 opening: every balance less
    the year's movements, retained earnings less the year's profit. Returns the opening
    book (with the translated retained earnings brought into 2025), and the movements by
    month."""
    chart = CHARTS[entity]
    loc = lambda sem: (chart[sem][0], "", "")  # noqa: E731
    cash26 = opening_2026.get(loc("cash"), [D(0)])[0]
    # The year's profit is a share of the gross margin, lower where the 2026 cash could not
    # have come from a smaller balance a year before.
    for keep in (D("0.12"), D("0.08"), D("0.05"), D("0.03"), D("0.01")):
        months = trade_months(entity, keep)
        revalue(entity, opening_2026, months)
        cash_in = sum(b.get(loc("cash"), [D(0)])[0] for b in months.values())
        if cash26 - cash_in > 0:
            break
    # Work the 2025 opening back from the 2026 opening.
    return work_back(entity, opening_2026, months)


def trade_months(entity, keep):
    """The twelve months of 2025 of one entity, keeping `keep` of the gross margin as
    profit (a holding company without sales: its costs only)."""
    ccy = CCY[entity]
    chart = CHARTS[entity]
    p = P[entity]
    loc = lambda sem: (chart[sem][0], "", "")  # noqa: E731
    months = {}
    for i, period in enumerate(PRIOR_PERIODS + ["2025-12"]):
        book: dict = {}

        def post(sem, amount, book=book):
            if amount:
                row = book.setdefault(loc(sem), [D(0), D(0)])
                row[0] += amount

        rev = q(p["rev"] * SEASON[i] * D("0.93"), ccy)
        cogs = q(rev * p.get("cogs_ratio", D(0)), ccy) if "cogs_purch" in chart else D(0)
        margin = rev - cogs
        if rev:
            staff, rent = q(margin * D("0.45"), ccy), q(margin * D("0.08"), ccy)
            opex = q(margin * (D("0.47") - keep), ccy)
        else:  # a holding company: costs only
            staff, rent, opex = (q(p[k] * D("0.97"), ccy) for k in ("staff", "rent", "opex"))
        post("rev_ext", -rev) if rev else None
        post("cogs_purch", cogs)
        post("wages", staff)
        post("rent", rent)
        post("opex", opex)
        post("cash", rev - cogs - staff - rent - opex)
        assert sum(v[0] for v in book.values()) == 0, (entity, period)
        months[period] = book
    return months


def revalue(entity, opening_2026, months):
    """Month-end revaluation of the foreign-currency items of the 2026 opening through
    2025 (IAS 21.23: monetary items at the closing rate), against the local exchange gain
    or loss account. The amount at each month end is the transaction amount at the
    month's closing cross rate; December ends in the 2026 opening amount."""
    ccy = CCY[entity]
    for k, (amount26, tamt) in sorted(opening_2026.items()):
        loc_, cp, tccy = k
        if not tccy:
            continue
        before = q(tamt * cross(ccy, tccy, PRIOR_OPENING, "closing"), ccy)
        for period, book in months.items():
            now = amount26 if period == "2025-12" else q(tamt * cross(ccy, tccy, period, "closing"), ccy)
            move = now - before
            before = now
            if not move:
                continue
            fx = CHARTS[entity]["fx_gain" if move > 0 else "fx_loss"][0]
            for key, amount in ((k, move), ((fx, "", ""), -move)):
                row = book.setdefault(key, [D(0), D(0)])
                row[0] += amount


def work_back(entity, opening_2026, months):
    """The 2025 opening: the 2026 opening less the year's movements, retained earnings
    less the year's profit; and that profit translated as the engine does."""
    ccy = CCY[entity]
    chart = CHARTS[entity]
    loc = lambda sem: (chart[sem][0], "", "")  # noqa: E731
    opening = {k: [v[0], v[1]] for k, v in opening_2026.items()}
    profit_local = D(0)
    profit_eur = D(0)
    for period, book in months.items():
        by_group: dict = {}
        for k, (amount, _) in book.items():
            g = next(v[2] for v in chart.values() if v[0] == k[0])
            if ACC[g]["statement"] != "balance_sheet":
                profit_local += amount
                by_group[g] = by_group.get(g, D(0)) + amount
            else:
                opening.setdefault(k, [D(0), D(0)])[0] -= amount
        # Translated as the engine does: each month's movement per group account at the
        # month's average, rounded once (half away from zero).
        for g, amount in by_group.items():
            profit_eur += q(amount / rate(ccy, period, "average"), "EUR")
    re_key = loc("retained")
    opening[re_key][0] -= profit_local
    assert opening[loc("cash")][0] > 0, (entity, "cash at the 2025 opening")
    return opening, months, profit_eur


def inventory_profit(snapshots):
    """Goods bought inside the group still held by the buyer (proposed later input)."""
    rows = []
    shares = {("BRW-US", "ALD-UK"): D("0.55"), ("WSL-PL", "ALD-UK"): D("0.12"),
              ("KIS-JP", "BRW-US"): D("0.08"), ("BRW-US", "BRW-MX"): D("0.80")}
    margins = {"BRW-US": D("0.20"), "WSL-PL": D("0.15"), "KIS-JP": D("0.30")}
    notes = {"BRW-US": "cost plus 25% mark-up = 20% of the transfer price",
             "WSL-PL": "cost plus 17.65% mark-up = 15% of the transfer price",
             "KIS-JP": "cost plus 42.86% mark-up = 30% of the transfer price"}
    for period in (OPENING_PERIOD, "2026-12"):
        for (seller, buyer), share in shares.items():
            inv_local = {v[0] for k, v in CHARTS[buyer].items() if k == "inventory"}
            held = sum((v[0] for k, v in snapshots[buyer][period].items() if k[0] in inv_local), D(0))
            amount = (held * share / 1000).quantize(D(1), rounding="ROUND_FLOOR") * 1000
            assert 0 < amount <= held
            label = "opening: unrealised profit eliminated in the 2025 close" if period == OPENING_PERIOD \
                else "year end 2026"
            rows.append([seller, buyer, period, fmt(amount, CCY[buyer]), CCY[buyer],
                         f"{margins[seller]:.2f}", f"{label}; {notes[seller]}"])
    return rows


# Document detail (entities/<ENTITY>/documents.csv, optional): BRW-US lists the two
# invoices it issued in the last days of a month that the buyer had not booked by the
# month end. One row per document and intercompany kind, debit positive from BRW-US's
# point of view: the receivable (trade) and the revenue (sales).
DOCUMENTS_ENTITY = "BRW-US"
DOCUMENT_DATES = {"timing_jun": "2026-06-29", "timing_dec": "2026-12-30"}
DOCUMENT_NOTES = {"timing_jun": "instruments invoiced 2026-06-29 and booked by BRW-MX on 2026-07-02",
                  "timing_dec": "instruments in transit to ALD-UK at the year end"}


# A revaluation (docs/demo.md "A revaluation surplus"): BRW-US carries its land under the
# revaluation model (IAS 16.31) and a valuation at 30 June raises it by USD 250,000.00,
# a gain in OCI that the group chart accumulates in the revaluation surplus (IAS 16.39).
# No deferred tax is booked on it, to keep the demo small.
REVALUATION = {("BRW-US", 6): D("250000.00")}

# A top-side entry (entities/group_adjustments.csv, docs/demo.md "A top-side entry"): in
# November the auditors ask for a warranty provision at BRW-US after its books closed; the
# group books it in the ALD-US sub-group, naming BRW-US, in EUR on the group chart.
TOPSIDE_REASON = "warranty provision for the November recall asked for by the auditors after BRW-US closed"
TOPSIDE = [
    ("TS-2026-11-01", "2026-11", "ALD-US", "6200", D("85000.00"), "BRW-US"),
    ("TS-2026-11-01", "2026-11", "ALD-US", "2600", D("-85000.00"), "BRW-US"),
]


def group_adjustments():
    assert sum(x[4] for x in TOPSIDE) == 0, "a top-side entry must balance"
    return [[entry, period, scope, account, fmt(amount, PRESENTATION), entity, "", TOPSIDE_REASON,
             "group reporting (M. Okafor)"]
            for entry, period, scope, account, amount, entity in TOPSIDE]


def documents():
    rows = []
    for key, date in DOCUMENT_DATES.items():
        d = DELIBERATE[key]
        assert d["seller"] == DOCUMENTS_ENTITY and date[:7] == d["period"], key
        reference = d["ref"].split()[0]
        for kind, sign in (("trade", 1), ("sales", -1)):
            rows.append([reference, date, d["buyer"], kind, fmt(sign * d["amount"], "USD"), "USD",
                         DOCUMENT_NOTES[key]])
    return rows


LEDGERS: dict[str, Ledger] = {}


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    here = os.path.dirname(os.path.abspath(__file__))
    ap.add_argument("--out", default=os.path.normpath(os.path.join(here, "..", "..")),
                    help="folder that receives entities/ and rates/ (default: repository root)")
    args = ap.parse_args(argv)

    L, invoices, snapshots, movements = simulate()
    LEDGERS.update(L)
    w = Writer(args.out)

    w.text("entities/group.toml", group_toml())
    w.csv("entities/entities.csv",
          ["entity", "name", "country", "currency", "segment_geography", "segment_business",
           "hyperinflationary_from"],
          [list(e) + [""] for e in ENTITIES])
    w.csv("entities/holdings.csv",
          ["owner", "owned", "capital_share", "voting_share", "valid_from", "valid_to",
           "arrangement", "method_override", "override_reason"],
          [list(h[:5]) + [h[5] if len(h) > 5 else "", "", "", ""] for h in HOLDINGS])
    w.csv("entities/ownership_changes.csv",
          ["date", "holder", "owned", "share", "consideration", "fair_value_held", "costs", "gain_account",
           "note"],
          [["2026-04-01", "ALD-NL", "GLF-BH", "0.45", fmt(in_bhd(GLF_CONSIDERATION), "BHD"),
            fmt(in_bhd(GLF_HELD_FAIR_VALUE), "BHD"), "", NRD_SALE["gain_account"],
            f"45% more for EUR {GLF_CONSIDERATION}: control; the 15% held since 2023 worth EUR {GLF_HELD_FAIR_VALUE}"
            " (BHD at the 2026-03 closing rate)"],
           [NRD_SALE["date"], "ALD-NL", NRD_SALE["entity"], "-1.00", fmt(nrd_sale_consideration(), "SEK"), "", "",
            NRD_SALE["gain_account"],
            f"all of NRD-SE sold for EUR {NRD_SALE['proceeds']} received on the day (SEK at the 2026-09 closing rate)"]])
    w.csv("entities/accounts.csv",
          ["account", "name", "statement", "class", "basis", "ic_kind", "non_current", "reserve"],
          [list(a) + [RESERVES.get(a[0], "")] for a in GROUP_ACCOUNTS])
    w.csv("entities/layouts.csv",
          ["statement", "line", "label", "accounts", "total_of", "presentation"],
          [list(x) for x in LAYOUTS])

    for e, led in L.items():
        mapping = {}
        for sem, (loc, name, grp) in CHARTS[e].items():
            assert mapping.get(loc, (name, grp)) == (name, grp), (e, loc)
            mapping[loc] = (name, grp)
        unused = set(mapping) - led.used_locals
        assert not unused, f"{e}: chart accounts never used {sorted(unused)}"
        w.csv(f"entities/{e}/mapping.csv", ["local_account", "local_name", "group_account"],
              [[loc, name, grp] for loc, (name, grp) in sorted(mapping.items())])
        opening_header = ["account", "amount", "counterparty", "txn_currency", "txn_amount",
                          "amount_presentation"]
        header = ["period", "account", "amount", "counterparty", "txn_currency", "txn_amount"]
        if e in PRIOR_YEAR_ENTITIES:
            # The prior year 2025: opening.csv is its opening; the 2026 opening is
            # delivered beside it as opening-2026-01.csv, which tessera checks against
            # the 2025 close.
            rows26 = tb_rows(e, snapshots[e][OPENING_PERIOD], with_presentation=True)
            w.csv(f"entities/{e}/opening-{PRIOR_YEAR_START}.csv", opening_header, rows26)
            opening25, months25, profit_eur = prior_year(e, snapshots[e][OPENING_PERIOD])
            rows = tb_rows(e, opening25, with_presentation=True)
            re_local = CHARTS[e]["retained"][0]
            re26 = next(D(r[5]) for r in rows26 if r[0] == re_local)
            for row in rows:
                if row[0] == re_local:  # the translated retained earnings of 2026 less 2025's result
                    row[5] = fmt(re26 - profit_eur, "EUR")
            w.csv(f"entities/{e}/opening.csv", opening_header, rows)
            for period, book in months25.items():
                w.csv(f"entities/{e}/tb-{period}.movements.csv", header, tb_rows(e, book, period))
        else:
            w.csv(f"entities/{e}/opening.csv", opening_header,
                  tb_rows(e, snapshots[e][OPENING_PERIOD], with_presentation=True))
        seen: set = set(snapshots[e][OPENING_PERIOD])
        for period in PERIODS:
            if e == NRD_SALE["entity"] and period > NRD_SALE["last"]:
                break  # sold: no deliveries after the last month end consolidated
            if e in BALANCES_DELIVERY:
                snap = snapshots[e][period]
                seen |= set(snap)
                rows = tb_rows(e, snap, period, keys=seen)
                w.csv(f"entities/{e}/tb-{period}.balances.csv", header, rows)
            else:
                rows = tb_rows(e, movements[e][period], period)
                w.csv(f"entities/{e}/tb-{period}.movements.csv", header, rows)

    w.csv(f"entities/{DOCUMENTS_ENTITY}/documents.csv",
          ["reference", "date", "counterparty", "ic_kind", "amount", "currency", "description"],
          documents())
    w.csv("entities/inventory_profit.csv",
          ["seller", "buyer", "period", "inventory_amount", "currency", "margin_rate", "note"],
          inventory_profit(snapshots))

    w.csv("entities/group_adjustments.csv",
          ["entry", "period", "scope", "account", "amount", "entity", "counterparty", "reason", "prepared_by"],
          group_adjustments())

    rate_rows = []
    for period in [PRIOR_OPENING] + PRIOR_PERIODS + ALL_PERIODS:
        for ccy in sorted(RATES):
            r = RATES[ccy][period]
            rate_rows.append([period, ccy, f"{r['closing']}", f"{r['average']}",
                              f"{r['average_ytd']}" if r["average_ytd"] is not None else "",
                              "units_per_presentation", "invented demo rate"])
    w.csv("rates/monthly.csv", ["period", "currency", "closing", "average", "average_ytd", "quote", "source"],
          rate_rows)
    w.csv("rates/historical.csv", ["entity", "account", "period", "rate", "quote", "note"],
          [[dv["payer"], L[dv["payer"]].resolve("retained", "", "")[1], dv["period"], f"{dv['rate']}",
            "units_per_presentation", dv["note"]] for dv in DIVIDENDS])
    stale = []
    for sub in ("entities", "rates"):
        for dirpath, _, names in os.walk(os.path.join(args.out, sub)):
            for n in names:
                rel = os.path.relpath(os.path.join(dirpath, n), args.out).replace(os.sep, "/")
                if rel not in w.written:
                    stale.append(rel)
    for rel in sorted(stale):
        print(f"warning: {rel} was not written by this run (left as it is)", file=sys.stderr)
    print(f"wrote {len(w.written)} files under {args.out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())

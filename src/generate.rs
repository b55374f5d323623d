//! The synthetic group: an invented group of any size in the real input format, for
//! benchmarks and for tests that need more than the demo. This module is the data model
//! only: `Plan::new` draws the group-wide facts (structure, currencies, chart, rates,
//! intercompany pairs and what each pair's difference is), and `Plan::entity` draws one
//! entity's delivery (mapping, opening balance, monthly trial balances, documents) from
//! its own seeded stream, so entities can be produced and written one at a time and the
//! whole set is never in memory. `report::generate` writes the files.
//!
//! Determinism: every random draw comes from a ChaCha stream seeded with the seed and
//! numbered by what it is for (the group, an entity, a pair), so the same options give
//! the same group, whatever order the entities are produced in.
//!
//! Both sides of an intercompany pair draw the pair's flows from the pair's own stream,
//! so the seller's receivable and the buyer's payable agree by construction, except for
//! the difference the pair was given: none (`matched`), a few units (`within_tolerance`),
//! the last invoice of the closing month not booked by the buyer (`timing`), a true
//! mismatch (`open`), or sides in different currencies that agree in the transaction
//! currency only (`fx`). Amounts are exact decimals in each currency's minor unit; every
//! trial balance sums to zero through a cash line.

use std::collections::BTreeMap;

use chrono::NaiveDate;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rust_decimal::{Decimal, RoundingStrategy};

use crate::model::{Currency, Period};

/// Limits on what the generator is asked for (beyond them it refuses).
pub const MAX_ENTITIES: usize = crate::load::MAX_ENTITIES;
pub const MAX_ACCOUNTS: usize = 50_000;
pub const MAX_MONTHS: u32 = 12;

/// The fiscal year of every synthetic group (calendar year).
pub const YEAR: i32 = 2026;

/// What to generate.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Options {
    pub entities: usize,
    /// Accounts in the group chart.
    pub accounts: usize,
    /// Group accounts each entity uses (its local chart maps to them).
    pub used: usize,
    pub months: u32,
    pub seed: u64,
    /// Intercompany document lines to aim for, over all entities and months.
    pub documents: usize,
    /// Trial balances as Parquet instead of CSV.
    pub parquet: bool,
}

impl Options {
    pub fn check(&self) -> Result<(), String> {
        if self.entities == 0 || self.entities > MAX_ENTITIES {
            return Err(format!("--entities must be between 1 and {MAX_ENTITIES}"));
        }
        if self.accounts < MIN_ACCOUNTS || self.accounts > MAX_ACCOUNTS {
            return Err(format!("--accounts must be between {MIN_ACCOUNTS} and {MAX_ACCOUNTS}"));
        }
        if self.used < MIN_USED || self.used > self.accounts {
            return Err(format!("--used must be between {MIN_USED} and --accounts ({})", self.accounts));
        }
        if self.months == 0 || self.months > MAX_MONTHS {
            return Err(format!("--months must be between 1 and {MAX_MONTHS}"));
        }
        Ok(())
    }
}

/// The difference an intercompany pair is given in the closing month.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum PairDifference {
    Matched,
    WithinTolerance,
    Timing,
    Open,
    Fx,
}

impl PairDifference {
    pub fn as_str(&self) -> &'static str {
        match self {
            PairDifference::Matched => "matched",
            PairDifference::WithinTolerance => "within_tolerance",
            PairDifference::Timing => "timing",
            PairDifference::Open => "open",
            PairDifference::Fx => "fx",
        }
    }
}

/// Shares (in percent) of the differences drawn for pairs whose sides share a currency;
/// pairs across currencies are `fx`.
pub const SAME_CURRENCY_SHARES: [(PairDifference, u32); 4] = [
    (PairDifference::Matched, 55),
    (PairDifference::WithinTolerance, 15),
    (PairDifference::Timing, 15),
    (PairDifference::Open, 15),
];

/// How an entity is held.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Role {
    Parent,
    /// Held since before the year.
    Subsidiary,
    /// Control obtained on the first day of a month inside the year.
    AcquiredInYear(Period),
    /// Significant influence (30%), equity method.
    Associate,
}

#[derive(Debug, Clone)]
pub struct EntityPlan {
    pub id: String,
    pub currency: Currency,
    pub country: &'static str,
    pub region: &'static str,
    pub business: &'static str,
    pub role: Role,
    /// Index of the holder (none for the parent).
    pub owner: Option<usize>,
    pub share: Decimal,
    pub valid_from: NaiveDate,
    /// Local chart style: how local account numbers are written.
    pub chart_style: u8,
    /// Share capital and premium (functional currency, positive), the net assets acquired.
    pub capital: Decimal,
    pub premium: Decimal,
    /// Presentation-currency value of one unit at the acquisition (units per EUR).
    pub rate_historical: Decimal,
}

/// A group account of the synthetic chart.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ChartAccount {
    pub code: u32,
    pub name: String,
    pub statement: &'static str,
    pub class: &'static str,
    pub basis: &'static str,
    pub ic_kind: Option<&'static str>,
    pub non_current: bool,
}

/// One intercompany pair: the seller's receivable and revenue against the buyer's payable
/// and purchases, in the seller's currency; optionally a loan from the seller.
#[derive(Debug, Clone)]
pub struct PairPlan {
    pub seller: usize,
    pub buyer: usize,
    pub difference: PairDifference,
    pub loan: bool,
}

/// Monthly rates of a currency: closing and average, units per EUR.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct MonthRate {
    pub period: Period,
    pub closing: Decimal,
    pub average: Decimal,
}

/// The group-wide facts.
pub struct Plan {
    pub options: Options,
    pub entities: Vec<EntityPlan>,
    pub chart: Vec<ChartAccount>,
    pub pairs: Vec<PairPlan>,
    /// Per currency (other than EUR): the opening month, then each month of the year.
    pub rates: BTreeMap<Currency, Vec<MonthRate>>,
    /// Pair indices by entity.
    pairs_of: Vec<Vec<usize>>,
    /// Invoices per pair and month (documents).
    invoices: usize,
    /// Generic accounts of the chart by pool, for drawing each entity's accounts.
    pools: Vec<(Pool, Vec<u32>)>,
    /// Chart position by code.
    chart_index: BTreeMap<u32, usize>,
    /// Entities held directly, by holder.
    children_of: Vec<Vec<usize>>,
}

/// One row of an entity's mapping.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct MappingRow {
    pub local_account: String,
    pub local_name: String,
    pub group_account: u32,
}

/// A trial balance or opening row, amounts in the entity's minor unit.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct LedgerRow {
    pub account: String,
    pub amount: Decimal,
    pub counterparty: Option<String>,
    pub txn: Option<(Currency, Decimal)>,
    /// Opening only: the brought-forward presentation amount of an equity account.
    pub amount_presentation: Option<Decimal>,
}

/// One intercompany document row.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DocumentRow {
    pub reference: String,
    pub date: NaiveDate,
    pub counterparty: String,
    pub ic_kind: &'static str,
    pub amount: Decimal,
    pub currency: Currency,
}

/// One entity's delivery.
pub struct EntityDelivery {
    pub id: String,
    pub mapping: Vec<MappingRow>,
    pub opening: Vec<LedgerRow>,
    /// One trial balance per month of the year, in order.
    pub months: Vec<(Period, Vec<LedgerRow>)>,
    pub documents: Vec<DocumentRow>,
    /// An investment bought during the year: (month, child index, amount in own currency).
    pub acquisitions_made: Vec<(Period, usize, Decimal)>,
}

/// An acquisition row (acquisitions.csv): amounts in the acquired entity's currency.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct AcquisitionRow {
    pub owned: String,
    pub date: NaiveDate,
    pub consideration: Decimal,
    pub net_assets: Decimal,
    pub net_assets_presentation: Decimal,
}

const MIN_ACCOUNTS: usize = 40;
const MIN_USED: usize = 30;

// Group accounts with a role (6 digits, so that layout ranges compare as text).
pub const GOODWILL: u32 = 110000;
pub const INVESTMENTS: u32 = 120000;
pub const ASSOCIATES: u32 = 130000;
pub const LOANS_TO_GROUP: u32 = 140000;
pub const INVENTORY: u32 = 150000;
pub const RECEIVABLES_GROUP: u32 = 165000;
pub const CASH: u32 = 180000;
pub const BORROWINGS_GROUP: u32 = 210000;
pub const PAYABLES_GROUP: u32 = 245000;
pub const SHARE_CAPITAL: u32 = 300000;
pub const SHARE_PREMIUM: u32 = 310000;
pub const RETAINED_EARNINGS: u32 = 320000;
pub const TRANSLATION_RESERVE: u32 = 330000;
pub const NCI: u32 = 390000;
pub const REVENUE_GROUP: u32 = 410000;
pub const EQUITY_RESULT: u32 = 490000;
pub const COST_OF_SALES: u32 = 500000;
pub const PURCHASES_GROUP: u32 = 510000;
pub const IC_DIFFERENCE: u32 = 695000;
pub const INTEREST_INCOME_GROUP: u32 = 700000;
pub const INTEREST_EXPENSE_GROUP: u32 = 710000;
pub const INCOME_TAX: u32 = 800000;
pub const TRANSLATION_DIFFERENCE: u32 = 900000;

/// Pools of generic accounts: (first code, statement, class, basis, non-current, weight %).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct Pool {
    first: u32,
    last: u32,
    statement: &'static str,
    class: &'static str,
    basis: &'static str,
    non_current: bool,
    weight: usize,
    label: &'static str,
}

const POOLS: [Pool; 9] = [
    Pool {
        first: 100001,
        last: 149999,
        statement: "balance_sheet",
        class: "asset",
        basis: "closing",
        non_current: true,
        weight: 10,
        label: "Non-current asset",
    },
    Pool {
        first: 150001,
        last: 199999,
        statement: "balance_sheet",
        class: "asset",
        basis: "closing",
        non_current: false,
        weight: 18,
        label: "Current asset",
    },
    Pool {
        first: 200001,
        last: 239999,
        statement: "balance_sheet",
        class: "liability",
        basis: "closing",
        non_current: false,
        weight: 8,
        label: "Non-current liability",
    },
    Pool {
        first: 240001,
        last: 299999,
        statement: "balance_sheet",
        class: "liability",
        basis: "closing",
        non_current: false,
        weight: 16,
        label: "Current liability",
    },
    Pool {
        first: 400001,
        last: 489999,
        statement: "profit_or_loss",
        class: "income",
        basis: "average",
        non_current: false,
        weight: 12,
        label: "Revenue",
    },
    Pool {
        first: 500001,
        last: 599999,
        statement: "profit_or_loss",
        class: "expense",
        basis: "average",
        non_current: false,
        weight: 10,
        label: "Cost of sales",
    },
    Pool {
        first: 600001,
        last: 699999,
        statement: "profit_or_loss",
        class: "expense",
        basis: "average",
        non_current: false,
        weight: 20,
        label: "Operating expense",
    },
    Pool {
        first: 720001,
        last: 799999,
        statement: "profit_or_loss",
        class: "expense",
        basis: "average",
        non_current: false,
        weight: 4,
        label: "Finance cost",
    },
    Pool {
        first: 800001,
        last: 899999,
        statement: "profit_or_loss",
        class: "expense",
        basis: "average",
        non_current: false,
        weight: 2,
        label: "Tax",
    },
];

/// Invented magnitudes of each currency (units per EUR), its countries and region.
const CURRENCIES: &[(&str, &str, &[&str], &str)] = &[
    ("EUR", "1", &["NL", "DE", "FR", "IT", "ES", "BE", "AT", "IE", "FI", "PT"], "Europe"),
    ("USD", "1.08", &["US"], "Americas"),
    ("GBP", "0.85", &["GB"], "Europe"),
    ("JPY", "160.5", &["JP"], "Asia"),
    ("CHF", "0.95", &["CH"], "Europe"),
    ("SEK", "11.3", &["SE"], "Europe"),
    ("NOK", "11.5", &["NO"], "Europe"),
    ("DKK", "7.46", &["DK"], "Europe"),
    ("PLN", "4.3", &["PL"], "Europe"),
    ("CZK", "25.1", &["CZ"], "Europe"),
    ("HUF", "390.2", &["HU"], "Europe"),
    ("CAD", "1.47", &["CA"], "Americas"),
    ("MXN", "19.5", &["MX"], "Americas"),
    ("BRL", "5.9", &["BR"], "Americas"),
    ("AUD", "1.63", &["AU"], "Asia Pacific"),
    ("NZD", "1.78", &["NZ"], "Asia Pacific"),
    ("SGD", "1.45", &["SG"], "Asia Pacific"),
    ("HKD", "8.4", &["HK"], "Asia Pacific"),
    ("CNY", "7.8", &["CN"], "Asia Pacific"),
    ("INR", "90.1", &["IN"], "Asia Pacific"),
    ("KRW", "1450.3", &["KR"], "Asia Pacific"),
    ("ZAR", "20.1", &["ZA"], "Africa"),
    ("BHD", "0.41", &["BH"], "Middle East"),
    ("KWD", "0.33", &["KW"], "Middle East"),
    ("AED", "3.97", &["AE"], "Middle East"),
    ("SAR", "4.05", &["SA"], "Middle East"),
];

const BUSINESSES: &[&str] = &["Instruments", "Sensors", "Components", "Services", "Software"];

/// Children per holding in the tree of subsidiaries (depth grows as log of this).
const FAN_OUT: usize = 5;

fn stream(seed: u64, number: u64) -> ChaCha8Rng {
    let mut r = ChaCha8Rng::seed_from_u64(seed);
    r.set_stream(number);
    r
}

const GROUP_STREAM: u64 = 0;
const ENTITY_STREAM: u64 = 1 << 32;
const PAIR_STREAM: u64 = 2 << 32;

fn dec(s: &str) -> Decimal {
    s.parse().expect("a decimal literal of this module")
}

/// `x` rounded to `dp` decimals, half away from zero, at exactly that scale.
fn at_scale(x: Decimal, dp: u32) -> Decimal {
    let mut r = x.round_dp_with_strategy(dp, RoundingStrategy::MidpointAwayFromZero);
    if r.is_zero() {
        r = Decimal::ZERO;
    }
    r.rescale(dp);
    r
}

/// An amount in EUR cents drawn log-uniformly between 10^lo and 10^hi cents.
fn draw_cents(r: &mut ChaCha8Rng, lo: u32, hi: u32) -> i64 {
    let e = r.random_range(lo..hi);
    r.random_range(10i64.pow(e)..10i64.pow(e + 1))
}

/// The entities of the plan, drawn in order from the group stream: currency, country,
/// business, role, holder and share, dates, capital.
fn draw_entities(r: &mut ChaCha8Rng, n: usize, months: u32, fiscal_start: Period) -> Vec<EntityPlan> {
    let mut entities: Vec<EntityPlan> = Vec::with_capacity(n);
    let leaves_from = if n > 1 { (n - 1) / FAN_OUT + 1 } else { 1 };
    for i in 0..n {
        let (code, rate, countries, region) = if i == 0 {
            CURRENCIES[0]
        } else {
            let pick = r.random_range(0..100u32);
            if pick < 30 {
                CURRENCIES[0]
            } else if pick < 45 {
                CURRENCIES[1]
            } else {
                CURRENCIES[r.random_range(2..CURRENCIES.len())]
            }
        };
        let currency = Currency::parse(code).expect("an ISO 4217 code");
        let country = countries[r.random_range(0..countries.len())];
        let business = BUSINESSES[r.random_range(0..BUSINESSES.len())];
        let leaf = i >= leaves_from;
        let role = if i == 0 {
            Role::Parent
        } else if leaf && (i - leaves_from) % 40 == 3 {
            Role::Associate
        } else if leaf && months >= 3 && (i - leaves_from) % 60 == 1 {
            Role::AcquiredInYear(fiscal_start.plus_months(r.random_range(1..months as i32 - 1)))
        } else {
            Role::Subsidiary
        };
        let (owner, share) = match role {
            Role::Parent => (None, Decimal::ONE),
            Role::Associate => (Some(0), dec("0.30")),
            _ => {
                let shares = ["1.00", "1.00", "1.00", "0.80", "0.75", "0.60", "0.90"];
                (Some((i - 1) / FAN_OUT), dec(shares[r.random_range(0..shares.len())]))
            }
        };
        let valid_from = match role {
            Role::AcquiredInYear(p) => p.first_day(),
            _ => NaiveDate::from_ymd_opt(r.random_range(2008..2024), r.random_range(1..13), 1).expect("a valid date"),
        };
        let minor = currency.minor_unit();
        let base = dec(rate);
        // The rate at acquisition: within 15% of today's magnitude.
        let drift = Decimal::new(r.random_range(85_000i64..115_000), 5);
        let rate_historical = at_scale(base * drift, 6);
        let capital = at_scale(Decimal::new(draw_cents(r, 8, 10), 2) * base, minor);
        let premium = at_scale(Decimal::new(draw_cents(r, 7, 9), 2) * base, minor);
        entities.push(EntityPlan {
            id: format!("S{i:05}"),
            currency,
            country,
            region,
            business,
            role,
            owner,
            share,
            valid_from,
            chart_style: r.random_range(0..3u8),
            capital,
            premium,
            rate_historical,
        });
    }
    entities
}

/// Rates: a random walk per currency from its invented magnitude.
fn draw_rates(r: &mut ChaCha8Rng, months: u32, fiscal_start: Period) -> BTreeMap<Currency, Vec<MonthRate>> {
    let mut rates = BTreeMap::new();
    for (code, base, _, _) in CURRENCIES.iter().skip(1) {
        let c = Currency::parse(code).expect("an ISO 4217 code");
        let mut closing = dec(base);
        let mut list = Vec::new();
        for m in 0..=months {
            let period = fiscal_start.plus_months(m as i32 - 1);
            let before = closing;
            let step = Decimal::new(r.random_range(-200i64..=200), 4);
            closing = at_scale(before * (Decimal::ONE + step), 6);
            let average = at_scale((before + closing) / Decimal::TWO, 6);
            list.push(MonthRate { period, closing, average });
        }
        rates.insert(c, list);
    }
    rates
}

/// Intercompany pairs: each consolidated entity sells to its holder, and most to one
/// other entity, preferably one sharing its currency.
fn draw_pairs(r: &mut ChaCha8Rng, entities: &[EntityPlan]) -> Vec<PairPlan> {
    let n = entities.len();
    let trades = |e: &EntityPlan| matches!(e.role, Role::Parent | Role::Subsidiary);
    let mut by_currency: BTreeMap<Currency, Vec<usize>> = BTreeMap::new();
    let mut pairs = Vec::new();
    for i in 0..n {
        let e = &entities[i];
        if !trades(e) {
            continue;
        }
        let mut partners = Vec::new();
        if let Some(o) = e.owner {
            partners.push(o);
        }
        if i > 1 && r.random_range(0..100) < 85 {
            let same = by_currency.get(&e.currency).filter(|v| !v.is_empty());
            let j = match same {
                Some(v) if r.random_range(0..100) < 80 => v[r.random_range(0..v.len())],
                _ => r.random_range(0..i),
            };
            if trades(&entities[j]) && !partners.contains(&j) {
                partners.push(j);
            }
        }
        for j in partners {
            let difference = if entities[j].currency != e.currency {
                PairDifference::Fx
            } else {
                let mut pick = r.random_range(0..100u32);
                let mut d = PairDifference::Matched;
                for (kind, share) in SAME_CURRENCY_SHARES {
                    if pick < share {
                        d = kind;
                        break;
                    }
                    pick -= share;
                }
                d
            };
            let loan = Some(j) == e.owner && i % 3 == 0;
            // The holder lends: the seller of a loan pair is the holder.
            let (seller, buyer) = if loan { (j, i) } else { (i, j) };
            pairs.push(PairPlan { seller, buyer, difference, loan });
        }
        by_currency.entry(e.currency).or_default().push(i);
    }
    pairs
}

impl Plan {
    pub fn new(options: Options) -> Result<Plan, String> {
        options.check()?;
        let mut r = stream(options.seed, GROUP_STREAM);
        let chart = chart(options.accounts);
        let pools: Vec<(Pool, Vec<u32>)> = POOLS
            .iter()
            .map(|p| {
                let codes: Vec<u32> = chart
                    .iter()
                    .filter(|a| a.code >= p.first && a.code <= p.last && !is_role_account(a.code))
                    .map(|a| a.code)
                    .collect();
                (*p, codes)
            })
            .collect();
        let n = options.entities;
        let months = options.months;
        let fiscal_start = Period::new(YEAR, 1).expect("a valid month");
        let entities = draw_entities(&mut r, n, months, fiscal_start);
        let rates = draw_rates(&mut r, months, fiscal_start);
        let pairs = draw_pairs(&mut r, &entities);
        let mut pairs_of = vec![Vec::new(); n];
        for (k, p) in pairs.iter().enumerate() {
            pairs_of[p.seller].push(k);
            pairs_of[p.buyer].push(k);
        }
        // Four document rows per invoice (two kinds, two sides).
        let per_invoice = pairs.len().max(1) * months as usize * 4;
        let invoices = (options.documents + per_invoice / 2) / per_invoice;
        let chart_index = chart.iter().enumerate().map(|(k, a)| (a.code, k)).collect();
        let mut children_of = vec![Vec::new(); n];
        for (j, e) in entities.iter().enumerate() {
            if let Some(o) = e.owner {
                children_of[o].push(j);
            }
        }
        Ok(Plan {
            options,
            entities,
            chart,
            pairs,
            rates,
            pairs_of,
            invoices: invoices.max(1),
            pools,
            chart_index,
            children_of,
        })
    }

    pub fn fiscal_start(&self) -> Period {
        Period::new(YEAR, 1).expect("a valid month")
    }

    pub fn periods(&self) -> Vec<Period> {
        let f = self.fiscal_start();
        f.through(&f.plus_months(self.options.months as i32 - 1))
    }

    fn rate(&self, c: Currency, p: Period) -> MonthRate {
        if c.code() == "EUR" {
            return MonthRate { period: p, closing: Decimal::ONE, average: Decimal::ONE };
        }
        let list = &self.rates[&c];
        list[list[0].period.months_until(&p) as usize]
    }

    /// `x` (currency `from`) in currency `to` through the month's rate against EUR.
    fn convert(&self, x: Decimal, from: Currency, to: Currency, p: Period, closing: bool) -> Decimal {
        if from == to {
            return x;
        }
        let (rf, rt) = (self.rate(from, p), self.rate(to, p));
        let (a, b) = if closing { (rf.closing, rt.closing) } else { (rf.average, rt.average) };
        at_scale(x / a * b, to.minor_unit())
    }

    /// EUR cents as an amount in `c` at the month's closing rate.
    fn local(&self, cents: i64, c: Currency, p: Period) -> Decimal {
        let eur = Decimal::new(cents, 2);
        at_scale(eur * self.rate(c, p).closing, c.minor_unit())
    }

    /// The acquisitions: every subsidiary (held as an investment) and every associate.
    pub fn acquisitions(&self) -> Vec<AcquisitionRow> {
        let mut out = Vec::new();
        for e in self.entities.iter().filter(|e| e.role != Role::Parent) {
            let net_assets = e.capital + e.premium;
            out.push(AcquisitionRow {
                owned: e.id.clone(),
                date: e.valid_from,
                consideration: self.consideration(e),
                net_assets,
                net_assets_presentation: at_scale(net_assets / e.rate_historical, 2),
            });
        }
        out
    }

    /// Consideration paid: the share of net assets plus a quarter (positive goodwill).
    fn consideration(&self, e: &EntityPlan) -> Decimal {
        at_scale((e.capital + e.premium) * e.share * dec("1.25"), e.currency.minor_unit())
    }

    /// The invoices of a pair in a month, in the seller's currency, and the settlement of
    /// the month (last month's invoices); the flows both sides book.
    fn pair_month(&self, k: usize, m: u32) -> PairMonth {
        let p = &self.pairs[k];
        let seller = &self.entities[p.seller];
        let c = seller.currency;
        let mut r = stream(self.options.seed, PAIR_STREAM + k as u64);
        let mut months = Vec::new();
        // Month 0 is the opening: the balance outstanding at the start of the year.
        for month in 0..=m {
            let period = self.fiscal_start().plus_months(month as i32 - 1);
            let n = if month == 0 { 1 } else { self.invoices };
            let invoices: Vec<Decimal> = (0..n).map(|_| self.local(draw_cents(&mut r, 6, 8), c, period)).collect();
            let loan = self.local(draw_cents(&mut r, 8, 9), c, period);
            let small = Decimal::new(r.random_range(1..500), 2);
            let open_share = Decimal::new(r.random_range(2..9), 2);
            months.push((invoices, loan, small, open_share));
        }
        let (invoices, _, small, open_share) = months[m as usize].clone();
        let loan = months[0].1;
        let settled: Decimal = if m == 0 { Decimal::ZERO } else { months[m as usize - 1].0.iter().copied().sum() };
        PairMonth { invoices, settled, loan, small, open_share }
    }

    /// The subsidiaries and the associates entity `i` holds.
    fn held_by(&self, i: usize) -> (Vec<usize>, Vec<usize>) {
        let of = |associate: bool| -> Vec<usize> {
            self.children_of[i]
                .iter()
                .copied()
                .filter(|j| (self.entities[*j].role == Role::Associate) == associate)
                .collect()
        };
        (of(false), of(true))
    }

    /// Entity `i`'s group accounts: the roles it needs (its pairs', its investments'),
    /// then generic ones from each pool by weight, drawn from its stream.
    fn draw_accounts(&self, i: usize, r: &mut ChaCha8Rng) -> (Vec<u32>, Vec<u32>) {
        let mut own: Vec<u32> = vec![CASH, SHARE_CAPITAL, SHARE_PREMIUM, RETAINED_EARNINGS];
        let pairs = &self.pairs_of[i];
        let mut ic_accounts = Vec::new();
        for &k in pairs {
            let p = &self.pairs[k];
            let seller = p.seller == i;
            ic_accounts.extend(if seller {
                [RECEIVABLES_GROUP, REVENUE_GROUP]
            } else {
                [PAYABLES_GROUP, PURCHASES_GROUP]
            });
            if p.loan {
                ic_accounts.extend(if seller {
                    [LOANS_TO_GROUP, INTEREST_INCOME_GROUP]
                } else {
                    [BORROWINGS_GROUP, INTEREST_EXPENSE_GROUP]
                });
            }
        }
        let (children, associates) = self.held_by(i);
        if !children.is_empty() {
            ic_accounts.push(INVESTMENTS);
        }
        if !associates.is_empty() {
            ic_accounts.push(ASSOCIATES);
        }
        ic_accounts.sort_unstable();
        ic_accounts.dedup();
        own.extend(&ic_accounts);
        let generic_wanted = self.options.used.saturating_sub(own.len() + 1);
        let total_weight: usize = self.pools.iter().map(|(p, _)| p.weight).sum();
        let mut generic: Vec<u32> = Vec::new();
        for (p, codes) in &self.pools {
            let want = (generic_wanted * p.weight / total_weight).min(codes.len());
            if want == 0 {
                continue;
            }
            // A deterministic sample without replacement: a random start and stride.
            let start = r.random_range(0..codes.len());
            for k in 0..want {
                generic.push(codes[(start + k * 7919) % codes.len()]);
            }
        }
        generic.sort_unstable();
        generic.dedup();
        (own, generic)
    }

    /// Draws one entity's delivery.
    pub fn entity(&self, i: usize) -> EntityDelivery {
        let e = &self.entities[i];
        let mut r = stream(self.options.seed, ENTITY_STREAM + i as u64);
        let c = e.currency;
        let minor = c.minor_unit();
        let periods = self.periods();
        let opening_period = self.fiscal_start().prev();
        let pairs = &self.pairs_of[i];
        let (children, associates) = self.held_by(i);
        let (own, generic) = self.draw_accounts(i, &mut r);
        // The local chart: one local account per group account, two for cash.
        let local_of = |g: u32, variant: u32| local_account(e.chart_style, g, variant);
        let mut mapping = Vec::new();
        let mut all_group: Vec<u32> = own.iter().chain(generic.iter()).copied().collect();
        all_group.sort_unstable();
        all_group.dedup();
        let name_of = |g: u32| self.chart_index.get(&g).map(|k| self.chart[*k].name.clone()).unwrap_or_default();
        for &g in &all_group {
            mapping.push(MappingRow { local_account: local_of(g, 1), local_name: name_of(g), group_account: g });
            if g == CASH {
                mapping.push(MappingRow {
                    local_account: local_of(g, 2),
                    local_name: "Second bank account".into(),
                    group_account: g,
                });
            }
        }
        let cash_main = local_of(CASH, 1);
        let cash_second = local_of(CASH, 2);
        let pool_of = |g: u32| self.pools.iter().find(|(p, _)| g >= p.first && g <= p.last).map(|(p, _)| *p);

        // Opening balance: balance-sheet accounts, equity at historical rates, retained
        // earnings balancing it.
        let mut opening = Vec::new();
        let row = |account: String, amount: Decimal| LedgerRow {
            account,
            amount,
            counterparty: None,
            txn: None,
            amount_presentation: None,
        };
        for &g in &generic {
            let Some(p) = pool_of(g) else { continue };
            if p.statement != "balance_sheet" {
                continue;
            }
            let x = self.local(draw_cents(&mut r, 6, 9), c, opening_period);
            opening.push(row(local_of(g, 1), if p.class == "asset" { x } else { -x }));
        }
        opening.push(row(cash_main.clone(), self.local(draw_cents(&mut r, 7, 9), c, opening_period)));
        let equity_at = |x: Decimal| at_scale(x / e.rate_historical, 2);
        for (g, x) in [(SHARE_CAPITAL, e.capital), (SHARE_PREMIUM, e.premium)] {
            let mut l = row(local_of(g, 1), -x);
            l.amount_presentation = Some(-equity_at(x));
            opening.push(l);
        }
        // Intercompany and investments at the opening.
        let mut ic_opening: Vec<LedgerRow> = Vec::new();
        for &k in pairs {
            ic_opening.extend(self.pair_rows(k, i, 0));
        }
        for &j in &children {
            let child = &self.entities[j];
            if matches!(child.role, Role::AcquiredInYear(_)) {
                continue;
            }
            let x = self.convert(self.consideration(child), child.currency, c, opening_period, true);
            ic_opening.push(LedgerRow { counterparty: Some(child.id.clone()), ..row(local_of(INVESTMENTS, 1), x) });
        }
        for &j in &associates {
            let a = &self.entities[j];
            let x = self.convert(self.consideration(a), a.currency, c, opening_period, true);
            // One row per associate: the counterparty keeps the rows apart.
            ic_opening.push(LedgerRow { counterparty: Some(a.id.clone()), ..row(local_of(ASSOCIATES, 1), x) });
        }
        opening.extend(ic_opening);
        let sum: Decimal = opening.iter().map(|l| l.amount).sum();
        let mut re = row(local_of(RETAINED_EARNINGS, 1), at_scale(-sum, minor));
        re.amount_presentation = Some(equity_at(-sum));
        opening.push(re);

        // Monthly trial balances.
        let mut months = Vec::new();
        let mut acquisitions_made = Vec::new();
        for (m, &period) in periods.iter().enumerate() {
            let m = m as u32 + 1;
            let mut rows = Vec::with_capacity(generic.len() + 8);
            for &g in &generic {
                let Some(p) = pool_of(g) else { continue };
                let x = self.local(draw_cents(&mut r, 3, 8), c, period);
                let amount = match p.class {
                    "income" => -x,
                    "expense" => x,
                    _ if r.random_range(0..2) == 0 => x,
                    _ => -x,
                };
                rows.push(row(local_of(g, 1), amount));
            }
            rows.push(row(cash_second.clone(), self.local(draw_cents(&mut r, 3, 7), c, period)));
            for &k in pairs {
                rows.extend(self.pair_rows(k, i, m));
            }
            for &j in &children {
                let child = &self.entities[j];
                if child.role == Role::AcquiredInYear(period) {
                    let x = self.convert(self.consideration(child), child.currency, c, period, true);
                    rows.push(LedgerRow { counterparty: Some(child.id.clone()), ..row(local_of(INVESTMENTS, 1), x) });
                    acquisitions_made.push((period, j, x));
                }
            }
            let sum: Decimal = rows.iter().map(|l| l.amount).sum();
            rows.push(row(cash_main.clone(), at_scale(-sum, minor)));
            months.push((period, rows));
        }
        let documents = pairs.iter().flat_map(|&k| self.pair_documents(k, i)).collect();
        EntityDelivery { id: e.id.clone(), mapping, opening, months, documents, acquisitions_made }
    }

    /// The invoices the buyer booked in month `m`: all but what the pair's difference
    /// leaves out, which only happens in the closing month.
    fn booked_by_buyer(&self, k: usize, m: u32, pm: &PairMonth) -> (Decimal, bool) {
        let total: Decimal = pm.invoices.iter().copied().sum();
        if m != self.options.months || m == 0 {
            return (total, false);
        }
        match self.pairs[k].difference {
            PairDifference::Timing => (total - pm.invoices.last().copied().unwrap_or_default(), true),
            PairDifference::WithinTolerance => {
                let c = self.entities[self.pairs[k].seller].currency;
                (total - at_scale(pm.small * self.rate(c, self.fiscal_start()).closing, c.minor_unit()), false)
            }
            PairDifference::Open => (
                total - at_scale(total * pm.open_share, self.entities[self.pairs[k].seller].currency.minor_unit()),
                false,
            ),
            PairDifference::Matched | PairDifference::Fx => (total, false),
        }
    }

    /// Entity `i`'s rows of pair `k` in month `m` (0: the opening balance).
    fn pair_rows(&self, k: usize, i: usize, m: u32) -> Vec<LedgerRow> {
        let p = &self.pairs[k];
        let seller = &self.entities[p.seller];
        let buyer = &self.entities[p.buyer];
        let c = seller.currency;
        let period = self.fiscal_start().plus_months(m as i32 - 1);
        let pm = self.pair_month(k, m);
        let is_seller = p.seller == i;
        let (me, other) = if is_seller { (seller, buyer) } else { (buyer, seller) };
        let local = |g: u32| local_account(me.chart_style, g, 1);
        let mut out = Vec::new();
        // Each side books in its own currency; the buyer converts at the month's rate
        // (the closing rate for balances at the opening, the average for the flows).
        let mut push = |g: u32, txn: Decimal, closing: bool| {
            let amount = if is_seller { txn } else { self.convert(txn, c, buyer.currency, period, closing) };
            out.push(LedgerRow {
                account: local(g),
                amount,
                counterparty: Some(other.id.clone()),
                txn: Some((c, txn)),
                amount_presentation: None,
            });
        };
        let total: Decimal = pm.invoices.iter().copied().sum();
        if m == 0 {
            if is_seller {
                push(RECEIVABLES_GROUP, total, true);
            } else {
                push(PAYABLES_GROUP, -total, true);
            }
            if p.loan {
                if is_seller {
                    push(LOANS_TO_GROUP, pm.loan, true);
                } else {
                    push(BORROWINGS_GROUP, -pm.loan, true);
                }
            }
            return out;
        }
        let (booked, _) = if is_seller { (total, false) } else { self.booked_by_buyer(k, m, &pm) };
        // Last month's invoices are settled this month, as both sides booked them.
        let settled = if is_seller || m == 1 {
            pm.settled
        } else {
            let prev = self.pair_month(k, m - 1);
            self.booked_by_buyer(k, m - 1, &prev).0
        };
        let interest = at_scale(pm.loan * dec("0.004"), c.minor_unit());
        if is_seller {
            push(RECEIVABLES_GROUP, booked - settled, false);
            push(REVENUE_GROUP, -booked, false);
            if p.loan {
                push(INTEREST_INCOME_GROUP, -interest, false);
            }
        } else {
            push(PAYABLES_GROUP, -(booked - settled), false);
            push(PURCHASES_GROUP, booked, false);
            if p.loan {
                push(INTEREST_EXPENSE_GROUP, interest, false);
            }
        }
        out
    }

    /// Entity `i`'s documents of pair `k`: every invoice of every month, both kinds; the
    /// buyer lacks the invoice it has not booked (timing).
    fn pair_documents(&self, k: usize, i: usize) -> Vec<DocumentRow> {
        let p = &self.pairs[k];
        let seller = &self.entities[p.seller];
        let buyer = &self.entities[p.buyer];
        let is_seller = p.seller == i;
        let other = if is_seller { buyer } else { seller };
        let mut out = Vec::new();
        for m in 1..=self.options.months {
            let period = self.fiscal_start().plus_months(m as i32 - 1);
            let pm = self.pair_month(k, m);
            let (_, last_missing) = self.booked_by_buyer(k, m, &pm);
            let n = pm.invoices.len();
            let days = period.last_day().signed_duration_since(period.first_day()).num_days() as usize;
            for (v, amount) in pm.invoices.iter().enumerate() {
                if !is_seller && last_missing && v + 1 == n {
                    continue;
                }
                // The last invoice of a month is dated a day before its end.
                let day = if v + 1 == n { days - 1 } else { v * days / n };
                let date = period.first_day() + chrono::Duration::days(day as i64);
                let reference = format!("{}-{:02}-{k:06}-{v:03}", seller.id, m);
                let sign = if is_seller { Decimal::ONE } else { -Decimal::ONE };
                for (kind, s) in [("trade", sign), ("sales", -sign)] {
                    out.push(DocumentRow {
                        reference: reference.clone(),
                        date,
                        counterparty: other.id.clone(),
                        ic_kind: kind,
                        amount: *amount * s,
                        currency: seller.currency,
                    });
                }
            }
        }
        out
    }

    /// Rows of documents over all pairs (both sides), for the summary.
    pub fn invoices_per_pair_month(&self) -> usize {
        self.invoices
    }

    /// How many pairs have each difference.
    pub fn difference_counts(&self) -> BTreeMap<PairDifference, usize> {
        let mut out = BTreeMap::new();
        for p in &self.pairs {
            *out.entry(p.difference).or_default() += 1;
        }
        out
    }
}

/// A local account number in one of the local chart styles.
fn local_account(style: u8, g: u32, variant: u32) -> String {
    match style {
        0 => format!("{g}{variant}"),
        1 => format!("{g}-{variant:02}"),
        _ => format!("L{:07}", g as u64 * 3 + variant as u64),
    }
}

const ROLE_ACCOUNTS: [u32; 23] = [
    GOODWILL,
    INVESTMENTS,
    ASSOCIATES,
    LOANS_TO_GROUP,
    INVENTORY,
    RECEIVABLES_GROUP,
    CASH,
    BORROWINGS_GROUP,
    PAYABLES_GROUP,
    SHARE_CAPITAL,
    SHARE_PREMIUM,
    RETAINED_EARNINGS,
    TRANSLATION_RESERVE,
    NCI,
    REVENUE_GROUP,
    EQUITY_RESULT,
    COST_OF_SALES,
    PURCHASES_GROUP,
    IC_DIFFERENCE,
    INTEREST_INCOME_GROUP,
    INTEREST_EXPENSE_GROUP,
    INCOME_TAX,
    TRANSLATION_DIFFERENCE,
];

fn is_role_account(code: u32) -> bool {
    ROLE_ACCOUNTS.contains(&code)
}

struct PairMonth {
    invoices: Vec<Decimal>,
    settled: Decimal,
    loan: Decimal,
    small: Decimal,
    open_share: Decimal,
}

/// The synthetic group chart: the accounts with a role, then generic accounts from each
/// pool by weight, `accounts` in all.
fn chart(accounts: usize) -> Vec<ChartAccount> {
    let a = |code: u32, name: &str, statement, class, basis, ic_kind, non_current| ChartAccount {
        code,
        name: name.to_string(),
        statement,
        class,
        basis,
        ic_kind,
        non_current,
    };
    let (bs, pl, oci) = ("balance_sheet", "profit_or_loss", "oci");
    let mut out = vec![
        a(GOODWILL, "Goodwill", bs, "asset", "closing", None, true),
        a(INVESTMENTS, "Investments in subsidiaries", bs, "asset", "closing", Some("investment"), true),
        a(ASSOCIATES, "Investments in associates", bs, "asset", "closing", None, true),
        a(LOANS_TO_GROUP, "Loans to group entities", bs, "asset", "closing", Some("loan"), true),
        a(INVENTORY, "Inventories", bs, "asset", "closing", None, false),
        a(RECEIVABLES_GROUP, "Receivables from group entities", bs, "asset", "closing", Some("trade"), false),
        a(CASH, "Cash and cash equivalents", bs, "asset", "closing", None, false),
        a(BORROWINGS_GROUP, "Borrowings from group entities", bs, "liability", "closing", Some("loan"), false),
        a(PAYABLES_GROUP, "Payables to group entities", bs, "liability", "closing", Some("trade"), false),
        a(SHARE_CAPITAL, "Share capital", bs, "equity", "historical", None, false),
        a(SHARE_PREMIUM, "Share premium", bs, "equity", "historical", None, false),
        a(RETAINED_EARNINGS, "Retained earnings", bs, "equity", "historical", None, false),
        a(TRANSLATION_RESERVE, "Translation reserve", bs, "equity", "historical", None, false),
        a(NCI, "Non-controlling interests", bs, "equity", "historical", None, false),
        a(REVENUE_GROUP, "Revenue from group entities", pl, "income", "average", Some("sales"), false),
        a(EQUITY_RESULT, "Share of result of associates", pl, "income", "average", None, false),
        a(COST_OF_SALES, "Cost of sales", pl, "expense", "average", None, false),
        a(PURCHASES_GROUP, "Purchases from group entities", pl, "expense", "average", Some("sales"), false),
        a(IC_DIFFERENCE, "Intercompany differences", pl, "expense", "average", None, false),
        a(
            INTEREST_INCOME_GROUP,
            "Interest income from group entities",
            pl,
            "income",
            "average",
            Some("interest"),
            false,
        ),
        a(
            INTEREST_EXPENSE_GROUP,
            "Interest expense to group entities",
            pl,
            "expense",
            "average",
            Some("interest"),
            false,
        ),
        a(INCOME_TAX, "Income tax expense", pl, "expense", "average", None, false),
        a(
            TRANSLATION_DIFFERENCE,
            "Exchange differences on translating foreign operations",
            oci,
            "income",
            "average",
            None,
            false,
        ),
    ];
    let generic = accounts.saturating_sub(out.len());
    let total_weight: usize = POOLS.iter().map(|p| p.weight).sum();
    let mut left = generic;
    for (k, p) in POOLS.iter().enumerate() {
        let count = if k + 1 == POOLS.len() { left } else { (generic * p.weight / total_weight).min(left) };
        left -= count;
        let mut code = p.first;
        for n in 0..count {
            while is_role_account(code) {
                code += 1;
            }
            out.push(a(code, &format!("{} {}", p.label, n + 1), p.statement, p.class, p.basis, None, p.non_current));
            code += 1;
        }
    }
    out.sort_by_key(|x| x.code);
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn small() -> Options {
        Options { entities: 12, accounts: 120, used: 60, months: 3, seed: 7, documents: 0, parquet: false }
    }

    #[test]
    fn every_trial_balance_and_opening_sums_to_zero() {
        let plan = Plan::new(small()).expect("valid options");
        for i in 0..plan.entities.len() {
            let d = plan.entity(i);
            assert!(d.opening.iter().map(|l| l.amount).sum::<Decimal>().is_zero(), "opening of {}", d.id);
            for (p, rows) in &d.months {
                assert!(rows.iter().map(|l| l.amount).sum::<Decimal>().is_zero(), "{} {p}", d.id);
            }
        }
    }

    #[test]
    fn amounts_have_the_currency_minor_unit() {
        let plan = Plan::new(small()).expect("valid options");
        for i in 0..plan.entities.len() {
            let d = plan.entity(i);
            let minor = plan.entities[i].currency.minor_unit();
            for (_, rows) in &d.months {
                for l in rows {
                    assert_eq!(l.amount.scale(), minor, "{} {}", d.id, l.account);
                }
            }
        }
    }

    #[test]
    fn the_same_seed_draws_the_same_entity_in_any_order() {
        let plan = Plan::new(small()).expect("valid options");
        let late = plan.entity(9).months.clone();
        let _ = plan.entity(3);
        let again = Plan::new(small()).expect("valid options").entity(9).months;
        assert_eq!(late, again);
        let other = Plan::new(Options { seed: 8, ..small() }).expect("valid options").entity(9).months;
        assert_ne!(late, other);
    }

    #[test]
    fn the_chart_has_the_size_asked_and_unique_codes() {
        let c = chart(500);
        assert_eq!(c.len(), 500);
        let mut codes: Vec<u32> = c.iter().map(|a| a.code).collect();
        codes.dedup();
        assert_eq!(codes.len(), 500);
    }

    #[test]
    fn both_sides_of_a_matched_pair_offset() {
        let plan = Plan::new(Options { entities: 60, ..small() }).expect("valid options");
        let k = plan.pairs.iter().position(|p| p.difference == PairDifference::Matched).expect("a matched pair");
        let m = plan.options.months;
        let (s, b) = (plan.pairs[k].seller, plan.pairs[k].buyer);
        let sum: Decimal = (0..=m)
            .flat_map(|month| plan.pair_rows(k, s, month).into_iter().chain(plan.pair_rows(k, b, month)))
            .map(|l| l.amount)
            .sum();
        assert!(sum.is_zero(), "matched pair {k} does not offset: {sum}");
    }
}

//! What every elimination rule reads: the period and its fiscal year, the group
//! structure, the chart and its role accounts, the closing rates, the rounding, and the
//! aggregated balances of the consolidated entities. Built once per close from the
//! loaded data; a rule's unit test builds one by hand from a few accounts and entities.

use std::collections::{BTreeMap, BTreeSet};

use rust_decimal::Decimal;

use super::aggregate::{Balances, EntityBalances};
use crate::load::{Dataset, Rate};
use crate::model::*;
use crate::money;
use crate::structure::{EntityStructure, GroupStructure};
use crate::translate::Translated;

/// The inputs shared by the rules of one close.
pub struct Context<'a> {
    /// The period end of the close.
    pub period: Period,
    /// The start of its fiscal year (see `aggregate::year_start`).
    pub fiscal_start: Period,
    /// The first month of the translated year: a close before it is the opening close.
    pub translated_from: Period,
    pub structure: &'a GroupStructure,
    pub roles: &'a RoleAccounts,
    pub chart: BTreeMap<&'a GroupAccount, &'a AccountDef>,
    /// Each entity's functional currency.
    pub currencies: BTreeMap<&'a EntityId, Currency>,
    /// Closing rates by currency and month.
    pub closing: BTreeMap<(Currency, Period), Rate>,
    pub presentation: Currency,
    /// The presentation currency's minor unit.
    pub minor: u32,
    pub mode: RoundingMode,
    /// Entities consolidated in full or proportionately.
    pub consolidated: BTreeSet<EntityId>,
    /// Entities consolidated in full.
    pub full: BTreeSet<EntityId>,
    /// The consolidated entities' contributions at `period`.
    pub balances: Balances,
    /// What the prior year's close in the same folder brings forward.
    pub brought_forward: &'a BroughtForward,
}

impl<'a> Context<'a> {
    pub fn new(
        ds: &'a Dataset,
        t: &Translated,
        s: &'a GroupStructure,
        period: Period,
        fiscal_start: Period,
        balances: Balances,
    ) -> Self {
        let of_method = |m: &[Method]| -> BTreeSet<EntityId> {
            s.entities().iter().filter(|e| m.contains(&e.method)).map(|e| e.id.clone()).collect()
        };
        Context {
            period,
            fiscal_start,
            translated_from: t.fiscal_start,
            structure: s,
            roles: &ds.settings.accounts,
            chart: ds.accounts.iter().map(|a| (&a.account, a)).collect(),
            currencies: ds.entities.iter().map(|e| (&e.id, e.currency)).collect(),
            closing: ds.rates.iter().map(|r| ((r.currency, r.period), r.closing)).collect(),
            presentation: ds.settings.presentation_currency,
            minor: t.minor,
            mode: ds.settings.policies.rounding,
            consolidated: of_method(&[Method::Full, Method::Proportionate]),
            full: of_method(&[Method::Full]),
            balances,
            brought_forward: &ds.brought_forward,
        }
    }

    /// Where an entry between two entities is posted: their lowest common parent.
    pub fn lcp(&self, a: &EntityId, b: &EntityId) -> EntityId {
        self.structure.lowest_common_parent(a, b).unwrap_or_else(|| self.structure.parent().clone())
    }

    /// Where an entry about one subsidiary is posted: its immediate parent.
    pub fn parent_of(&self, e: &EntityStructure) -> EntityId {
        e.immediate_parent.clone().unwrap_or_else(|| self.structure.parent().clone())
    }

    /// The entities of the structure consolidated by `method`.
    pub fn of_method(&self, method: Method) -> impl Iterator<Item = &'a EntityStructure> {
        self.structure.entities().iter().filter(move |e| e.method == method)
    }

    /// The chart's intercompany kind of an account.
    pub fn kind_of(&self, a: &GroupAccount) -> Option<&'a str> {
        self.chart.get(a).and_then(|d| d.ic_kind.as_deref())
    }

    /// Income, expense or OCI: an account of the year's result.
    pub fn is_flow(&self, a: &GroupAccount) -> bool {
        self.chart.get(a).is_some_and(|d| d.statement != Statement::BalanceSheet)
    }

    pub fn in_statement(&self, a: &GroupAccount, st: Statement) -> bool {
        self.chart.get(a).is_some_and(|d| d.statement == st)
    }

    /// Equity, or a flow that will be closed into equity.
    pub fn is_equity_or_flow(&self, a: &GroupAccount) -> bool {
        self.chart.get(a).is_some_and(|d| d.class == AccountClass::Equity || d.statement != Statement::BalanceSheet)
    }

    pub fn is_equity(&self, a: &GroupAccount) -> bool {
        self.chart.get(a).is_some_and(|d| d.class == AccountClass::Equity)
    }

    /// One entity's balances (empty when it has none).
    pub fn balances_of(&self, e: &EntityId) -> impl Iterator<Item = (&(GroupAccount, Option<EntityId>), &Decimal)> {
        self.balances.get(e).into_iter().flat_map(EntityBalances::iter)
    }

    pub fn round(&self, x: Decimal) -> Decimal {
        money::round(x, self.minor, self.mode)
    }

    /// `x` in `currency` at the closing rate of `p`, rounded; `None` without a rate.
    pub fn at_closing(&self, currency: Currency, x: Decimal, p: Period) -> Option<Decimal> {
        if currency == self.presentation {
            Some(self.round(x))
        } else {
            self.closing.get(&(currency, p)).map(|r| self.round(r.apply(x)))
        }
    }
}

/// A hand-built group for the rules' unit tests: parent P (EUR) holds 80% of S (USD),
/// both consolidated in full, with a small chart. Rates: 1 EUR = 2 USD at every month
/// end unless a test adds others.
#[cfg(test)]
pub mod fixture {
    use super::*;
    use crate::load::Quote;
    use chrono::NaiveDate;

    /// Nothing brought forward: the fixture's year is the first.
    static NOTHING_BROUGHT_FORWARD: BroughtForward = BroughtForward {
        investment_fx: BTreeMap::new(),
        equity_method_oci: BTreeMap::new(),
        operation_reserves: BTreeMap::new(),
        reserves_at_acquisition: BTreeMap::new(),
        translation_reserve_at_acquisition: BTreeMap::new(),
        equity_method_share: BTreeMap::new(),
    };

    pub fn d(s: &str) -> Decimal {
        s.parse().unwrap_or_else(|_| panic!("bad decimal {s}"))
    }

    pub fn p(s: &str) -> Period {
        s.parse().unwrap_or_else(|_| panic!("bad period {s}"))
    }

    pub fn id(s: &str) -> EntityId {
        EntityId::new(s)
    }

    pub fn acct(s: &str) -> GroupAccount {
        GroupAccount::new(s)
    }

    fn def(a: &str, statement: Statement, class: AccountClass, ic_kind: Option<&str>) -> AccountDef {
        AccountDef {
            account: GroupAccount::new(a),
            name: a.into(),
            statement,
            class,
            basis: Basis::Closing,
            ic_kind: ic_kind.map(String::from),
            non_current: false,
            reserve: None,
            monetary: None,
            source: Source::file("entities/accounts.csv"),
        }
    }

    /// The chart: 1200 investments (kind investment), 1400/2100 loans (loan), 1500
    /// inventory, 1650/2450 receivables/payables (trade), 3000 capital, 3200 retained
    /// earnings, 3300 translation reserve, 3900 NCI, 1100 goodwill, 1300 equity
    /// investments, 4000 revenue, 4100/5100 sales/purchases (sales), 4900 equity result,
    /// 5000 cost of sales, 6950 intercompany difference, 7300 FX gains, 7400 dividend
    /// income (dividend), 9000 translation difference (OCI).
    pub fn chart() -> Vec<AccountDef> {
        use AccountClass::*;
        use Statement::*;
        vec![
            def("1100", BalanceSheet, Asset, None),
            def("1200", BalanceSheet, Asset, Some("investment")),
            def("1300", BalanceSheet, Asset, None),
            def("1400", BalanceSheet, Asset, Some("loan")),
            def("1500", BalanceSheet, Asset, None),
            def("1650", BalanceSheet, Asset, Some("trade")),
            def("2100", BalanceSheet, Liability, Some("loan")),
            def("2450", BalanceSheet, Liability, Some("trade")),
            def("3000", BalanceSheet, Equity, None),
            def("3200", BalanceSheet, Equity, None),
            def("3300", BalanceSheet, Equity, None),
            def("3900", BalanceSheet, Equity, None),
            def("4000", ProfitOrLoss, Income, None),
            def("4100", ProfitOrLoss, Income, Some("sales")),
            def("4900", ProfitOrLoss, Income, None),
            def("5000", ProfitOrLoss, Expense, None),
            def("5100", ProfitOrLoss, Expense, Some("sales")),
            def("6950", ProfitOrLoss, Expense, None),
            def("7300", ProfitOrLoss, Income, None),
            def("7400", ProfitOrLoss, Income, Some("dividend")),
            def("9000", Oci, Income, None),
        ]
    }

    pub fn roles() -> RoleAccounts {
        RoleAccounts {
            retained_earnings: acct("3200"),
            translation_reserve: acct("3300"),
            translation_difference: acct("9000"),
            non_controlling_interest: acct("3900"),
            goodwill: acct("1100"),
            equity_investments: acct("1300"),
            equity_result: acct("4900"),
            intercompany_difference: acct("6950"),
            inventory: Some(acct("1500")),
            cost_of_sales: Some(acct("5000")),
            goodwill_impairment: None,
            bargain_purchase_gain: None,
            deferred_tax: None,
            deferred_tax_expense: None,
            net_monetary_position: None,
        }
    }

    fn date(s: &str) -> NaiveDate {
        NaiveDate::parse_from_str(s, "%Y-%m-%d").unwrap_or_else(|_| panic!("bad date {s}"))
    }

    /// A holding of `owner` in `owned` from `from`.
    pub fn holding(owner: &str, owned: &str, share: &str, from: &str) -> Holding {
        Holding {
            owner: id(owner),
            owned: id(owned),
            capital_share: d(share),
            voting_share: d(share),
            valid_from: date(from),
            valid_to: None,
            arrangement: None,
            method_override: None,
            source: Source::file("entities/holdings.csv"),
        }
    }

    /// The structure of `holdings` below P at the end of `period`.
    pub fn structure(entities: &[&str], holdings: &[Holding], period: Period) -> GroupStructure {
        let ids: Vec<EntityId> = entities.iter().map(|e| id(e)).collect();
        crate::structure::build(&ids, holdings, &id("P"), period.last_day(), d("0.2")).0
    }

    /// The data a test context borrows.
    pub struct World {
        pub chart: Vec<AccountDef>,
        pub roles: RoleAccounts,
        pub structure: GroupStructure,
        pub currencies: Vec<(EntityId, Currency)>,
    }

    impl World {
        /// P (EUR) with `holdings`, every other entity in USD, at the end of `period`.
        pub fn new(entities: &[&str], holdings: &[Holding], period: Period) -> Self {
            let eur = Currency::parse("EUR").unwrap_or_else(|| panic!("EUR"));
            let usd = Currency::parse("USD").unwrap_or_else(|| panic!("USD"));
            World {
                chart: chart(),
                roles: roles(),
                structure: structure(entities, holdings, period),
                currencies: entities.iter().map(|e| (id(e), if *e == "P" { eur } else { usd })).collect(),
            }
        }

        /// A context at `period` of a fiscal year starting `fiscal_start`, EUR
        /// presentation, cents, half away from zero; 2 USD per EUR at every month end
        /// from 2025-01 to 2026-12.
        pub fn context(&self, period: Period, fiscal_start: Period, balances: Balances) -> Context<'_> {
            let usd = Currency::parse("USD").unwrap_or_else(|| panic!("USD"));
            let of_method = |m: &[Method]| -> BTreeSet<EntityId> {
                self.structure.entities().iter().filter(|e| m.contains(&e.method)).map(|e| e.id.clone()).collect()
            };
            let mut closing = BTreeMap::new();
            for m in p("2025-01").through(&p("2026-12")) {
                closing.insert((usd, m), Rate { value: d("2"), quote: Quote::UnitsPerPresentation });
            }
            Context {
                period,
                fiscal_start,
                translated_from: fiscal_start,
                structure: &self.structure,
                roles: &self.roles,
                chart: self.chart.iter().map(|a| (&a.account, a)).collect(),
                currencies: self.currencies.iter().map(|(e, c)| (e, *c)).collect(),
                closing,
                presentation: Currency::parse("EUR").unwrap_or_else(|| panic!("EUR")),
                minor: 2,
                mode: RoundingMode::HalfAwayFromZero,
                consolidated: of_method(&[Method::Full, Method::Proportionate]),
                full: of_method(&[Method::Full]),
                balances,
                brought_forward: &NOTHING_BROUGHT_FORWARD,
            }
        }
    }

    /// Balances from `(entity, account, counterparty, amount)` rows.
    pub fn balances(rows: &[(&str, &str, Option<&str>, &str)]) -> Balances {
        let mut out = Balances::new();
        for (e, a, c, v) in rows {
            *out.entry(id(e)).or_default().entry((acct(a), c.map(id))).or_default() += d(v);
        }
        out
    }

    /// The journal's lines as `(account, entity, amount)` strings, for compact asserts.
    pub fn lines(e: &super::super::journal::Entry) -> Vec<(String, String, String)> {
        e.lines
            .iter()
            .map(|l| (l.account.to_string(), l.entity.to_string(), l.amount.normalize().to_string()))
            .collect()
    }
}

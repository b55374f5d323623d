//! The view of a close and the statements' arithmetic.
//!
//! A close is on year-to-date balances. A month or quarter view shows the flows (income,
//! expense, OCI) of its months only: the year to date less the close at the month end
//! before the view starts (the base close). That subtraction is written once, here
//! ([`flows_of_view`]), for the group and for anything else with accounts (segments use
//! it per column). Balance-sheet accounts are never subtracted: they are balances at the
//! period end.
//!
//! The statements' arithmetic: in the balance sheet the year's profit is shown in
//! retained earnings and its OCI in the reserve of each OCI account (the translation
//! reserve unless the chart names another), where they will be closed at year end ([`balance_sheet_amounts`]); the attribution of the view's profit and OCI
//! between the owners of the parent and the NCI (IFRS 10.B94, IAS 1.81B); and the proof
//! `balance_sheet_balances`.

use std::collections::BTreeMap;

use rust_decimal::Decimal;

use super::Close;
use crate::cli::View;
use crate::model::{AccountDef, GroupAccount, Period, RoleAccounts, Statement};
use crate::proof::Check;

/// Amounts by group account, debit positive.
pub type Amounts = BTreeMap<GroupAccount, Decimal>;

/// The month end whose close is subtracted from the year to date for `view`: the month
/// before the view's first month, or `None` when the view starts with the fiscal year.
pub fn base_period(view: View, period: Period, fiscal_year_start: u32, fiscal_start: Period) -> Option<Period> {
    match view {
        View::Ytd => None,
        View::Month => Some(period.prev()),
        View::Qtd => Some(period.fiscal_quarter_start(fiscal_year_start).prev()),
    }
    .filter(|p| *p >= fiscal_start)
}

/// The view's amounts from year-to-date ones: flows (accounts passing `is_flow`) less
/// the base's, balances as they are. Without a base the year to date is the view.
pub fn flows_of_view(ytd: &Amounts, base: Option<&Amounts>, is_flow: &dyn Fn(&GroupAccount) -> bool) -> Amounts {
    let mut out = ytd.clone();
    if let Some(b) = base {
        for (a, v) in b.iter().filter(|(a, _)| is_flow(a)) {
            *out.entry(a.clone()).or_default() -= *v;
        }
    }
    out
}

/// The chart by account, for the statement of each amount.
pub struct Chart<'a> {
    by_account: BTreeMap<&'a GroupAccount, &'a AccountDef>,
}

impl<'a> Chart<'a> {
    pub fn new(accounts: &'a [AccountDef]) -> Self {
        Chart { by_account: accounts.iter().map(|a| (&a.account, a)).collect() }
    }

    pub fn statement(&self, a: &GroupAccount) -> Option<Statement> {
        self.by_account.get(a).map(|d| d.statement)
    }

    /// Income, expense and OCI: the accounts a view subtracts.
    pub fn is_flow(&self, a: &GroupAccount) -> bool {
        self.statement(a).is_some_and(|s| s != Statement::BalanceSheet)
    }

    /// The equity reserve an OCI account accumulates into: its `reserve` in the chart,
    /// else the translation reserve (IAS 1.106(d): each component of equity).
    pub fn reserve_of<'r>(&'r self, a: &GroupAccount, roles: &'r RoleAccounts) -> &'r GroupAccount {
        self.by_account.get(a).and_then(|d| d.reserve.as_ref()).unwrap_or(&roles.translation_reserve)
    }

    /// The OCI of `amounts` by the reserve it accumulates into (debit positive).
    pub fn oci_by_reserve(&self, amounts: &Amounts, roles: &RoleAccounts) -> Amounts {
        let mut out = Amounts::new();
        for (a, v) in amounts.iter().filter(|(a, _)| self.statement(a) == Some(Statement::Oci)) {
            *out.entry(self.reserve_of(a, roles).clone()).or_default() += *v;
        }
        out
    }

    /// The sum of `amounts` on the accounts of statement `st`.
    pub fn sum(&self, amounts: &Amounts, st: Statement) -> Decimal {
        amounts.iter().filter(|(a, _)| self.statement(a) == Some(st)).map(|(_, v)| *v).sum()
    }
}

/// The balance sheet's amounts: the group trial balance with the year's profit or loss
/// added to retained earnings and its OCI to the reserve each OCI account accumulates
/// into, the translation reserve unless the chart names another (the flow accounts keep
/// their amounts; a balance-sheet layout does not show them).
pub fn balance_sheet_amounts(group: &Amounts, chart: &Chart, roles: &RoleAccounts) -> Amounts {
    let mut out = group.clone();
    let profit = chart.sum(group, Statement::ProfitOrLoss);
    *out.entry(roles.retained_earnings.clone()).or_default() += profit;
    out.entry(roles.translation_reserve.clone()).or_default();
    for (reserve, oci) in chart.oci_by_reserve(group, roles) {
        *out.entry(reserve).or_default() += oci;
    }
    out
}

/// Profit and OCI of the view and their split between the owners of the parent and the
/// NCI, credit positive.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Attribution {
    pub profit: Decimal,
    pub profit_nci: Decimal,
    pub oci: Decimal,
    pub oci_nci: Decimal,
    /// Profit and OCI of the year to date: what the balance sheet counts in equity.
    pub result_in_equity: Decimal,
}

impl Attribution {
    pub fn profit_owners(&self) -> Decimal {
        self.profit - self.profit_nci
    }

    pub fn oci_owners(&self) -> Decimal {
        self.oci - self.oci_nci
    }
}

/// The attribution of the view: the view's profit and OCI from `view_amounts`, the
/// NCI's shares from the NCI rows of the close less those of the base.
pub fn attribution(close: &Close, base: Option<&Close>, view_amounts: &Amounts, chart: &Chart) -> Attribution {
    let nci_sum = |c: &Close, f: &dyn Fn(&super::NciRow) -> Decimal| c.nci.iter().map(f).sum::<Decimal>();
    let less_base =
        |f: &dyn Fn(&super::NciRow) -> Decimal| nci_sum(close, f) - base.map(|b| nci_sum(b, f)).unwrap_or_default();
    Attribution {
        profit: -chart.sum(view_amounts, Statement::ProfitOrLoss),
        profit_nci: less_base(&|n| n.profit),
        oci: -chart.sum(view_amounts, Statement::Oci),
        oci_nci: less_base(&|n| n.oci),
        result_in_equity: -(chart.sum(&close.group, Statement::ProfitOrLoss) + chart.sum(&close.group, Statement::Oci)),
    }
}

/// The balance sheet balances once the result of the year is counted in equity.
pub fn balance_sheet_balances(close: &Close, chart: &Chart, attribution: &Attribution) -> Check {
    let bs_total = chart.sum(&close.group, Statement::BalanceSheet);
    Check::new(
        "balance_sheet_balances",
        (bs_total - attribution.result_in_equity).is_zero(),
        format!(
            "assets - equity - liabilities = {}, profit and OCI of the year = {}",
            crate::money::plain(bs_total),
            crate::money::plain(attribution.result_in_equity)
        ),
    )
}

/// Everything the statements of one view show, computed once.
pub struct ViewFigures {
    /// The flows of the view (income, expense, OCI): the income statement and OCI.
    pub flows: Amounts,
    /// The balance sheet's amounts at the period end.
    pub balance_sheet: Amounts,
    pub attribution: Attribution,
    pub check: Check,
}

/// The view of `close` given its base close.
pub fn view_figures(close: &Close, base: Option<&Close>, chart: &Chart, roles: &RoleAccounts) -> ViewFigures {
    let is_flow = |a: &GroupAccount| chart.is_flow(a);
    let flows: Amounts =
        flows_of_view(&close.group, base.map(|b| &b.group), &is_flow).into_iter().filter(|(a, _)| is_flow(a)).collect();
    let balance_sheet = balance_sheet_amounts(&close.group, chart, roles);
    let attribution = attribution(close, base, &flows, chart);
    let check = balance_sheet_balances(close, chart, &attribution);
    ViewFigures { flows, balance_sheet, attribution, check }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::close::context::fixture::{acct, chart, d, roles};

    /// Profit 100 (revenue 300 credit, cost 200 debit) into retained earnings; OCI of
    /// 9000 (no reserve named: the translation reserve 3300) credit 50, and of 9100
    /// (reserve 3400) credit 40 into the revaluation surplus, each apart.
    #[test]
    fn oci_goes_to_the_reserve_its_account_names() {
        let mut accounts = chart();
        let mut gains = accounts.iter().find(|a| a.account == acct("9000")).cloned().unwrap_or_else(|| panic!("9000"));
        gains.account = acct("9100");
        gains.reserve = Some(acct("3400"));
        accounts.push(gains);
        let chart = Chart::new(&accounts);
        let group: Amounts = [("4000", "-300"), ("5000", "200"), ("9000", "-50"), ("9100", "-40"), ("3200", "-10")]
            .into_iter()
            .map(|(a, v)| (acct(a), d(v)))
            .collect();
        let bs = balance_sheet_amounts(&group, &chart, &roles());
        let at = |a: &str| bs.get(&acct(a)).copied().unwrap_or_default();
        assert_eq!((at("3200"), at("3300"), at("3400")), (d("-110"), d("-50"), d("-40")));
    }
}

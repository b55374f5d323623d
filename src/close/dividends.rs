//! Rule `intragroup_dividend`: a dividend one group entity pays another is income of the
//! receiver and a distribution out of the payer's retained earnings; in the group it is
//! neither (IFRS 10.B86(c)). The receiver's income is reversed against the payer's
//! retained earnings, where the dividend was charged. The dividend receivable and
//! payable are a balance pair like any other (`intercompany.rs`).

use super::context::Context;
use super::journal::{EliminationRule, Journal, line};

/// Posts one entry per dividend line in profit or loss with a consolidated payer and
/// receiver (a subsidiary sold in the year brings its dividends to the sale in its
/// `loss_of_control` entry).
pub fn post(j: &mut Journal, cx: &Context) {
    for (receiver, accts) in cx.balances.iter().filter(|(r, _)| cx.consolidated.contains(*r)) {
        for ((acct, payer), amount) in accts {
            let Some(payer) = payer else { continue };
            if cx.kind_of(acct) != Some("dividend") || !cx.is_flow(acct) || !cx.consolidated.contains(payer) {
                continue;
            }
            j.post(
                EliminationRule::IntragroupDividend,
                cx.lcp(receiver, payer),
                vec![receiver.clone(), payer.clone()],
                format!("dividend of {payer} to {receiver}"),
                vec![
                    line(acct, receiver, Some(payer), -*amount),
                    line(&cx.roles.retained_earnings, payer, None, *amount),
                ],
            );
        }
    }
}

#[cfg(test)]
mod tests {
    use super::super::context::fixture::*;
    use super::*;

    /// S pays P a dividend of 50: P shows income 7400 -50 (a credit). The entry debits
    /// P's income +50 and credits S's retained earnings -50 (where S charged it).
    #[test]
    fn dividend_income_goes_back_to_the_payers_retained_earnings() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "0.8", "2020-01-01")], p("2026-06"));
        let cx = w.context(p("2026-06"), p("2026-01"), balances(&[("P", "7400", Some("S"), "-50")]));
        let mut j = Journal::default();
        post(&mut j, &cx);
        assert_eq!(j.entries.len(), 1);
        assert_eq!(j.entries[0].rule, EliminationRule::IntragroupDividend);
        assert_eq!(
            lines(&j.entries[0]),
            [("7400".into(), "P".into(), "50".into()), ("3200".into(), "S".into(), "-50".into())]
        );
    }
}

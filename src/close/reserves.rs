//! `reserves`: the translation reserve of each foreign operation consolidated in full at
//! the period end (IFRIC 16.17): what was brought forward (as delivered in the opening
//! balances) plus the year's differences that belong to the operation under the group's
//! IFRIC 16 method; their sum is what IAS 21.48 would reclassify to profit or loss on
//! the operation's disposal. No entry is posted: the reserve is the journal's and the
//! contributions' figures, seen by operation.

use std::collections::BTreeMap;

use rust_decimal::Decimal;

use super::OperationReserveRow;
use super::context::Context;
use crate::model::{EntityId, Ifric16Method, Period};
use crate::money;
use crate::translate::OperationReserve;

/// The reserve per operation consolidated in full: brought forward (`translate::brought_forward`) plus this year's
/// parts (`year_parts`, see `ifric16::parts_of_year`). A part whose entity or operation
/// is not consolidated in full stays where it arose.
///
/// An operation that came under control in this fiscal year brings nothing forward,
/// and an entity's parts of the months before its control month are not counted: the
/// exchange differences before control are part of the equity acquired (IFRS 3.32,
/// IFRS 10.B86(b)); only those since control are reclassified on disposal (IAS
/// 21.48). The acquisition month counts whole, as for its results (`pre_acquisition`).
pub fn reserves(
    cx: &Context,
    brought_forward: &BTreeMap<EntityId, Decimal>,
    year_parts: &[&OperationReserve],
    method: Ifric16Method,
) -> Vec<OperationReserveRow> {
    let control_month = |e: &EntityId| {
        cx.structure.entity(e).and_then(|s| s.controlled_from).map(Period::of_date).filter(|m| *m >= cx.fiscal_start)
    };
    let mut by_operation: BTreeMap<EntityId, (Decimal, Decimal)> = BTreeMap::new();
    for e in &cx.full {
        let bf = if control_month(e).is_some() {
            Decimal::new(0, cx.minor)
        } else {
            brought_forward.get(e).copied().unwrap_or_default()
        };
        by_operation.insert(e.clone(), (bf, Decimal::ZERO));
    }
    for r in year_parts.iter().filter(|r| control_month(&r.entity).is_none_or(|m| r.period >= m)) {
        let op = if cx.full.contains(&r.entity) && cx.full.contains(&r.operation) { &r.operation } else { &r.entity };
        if let Some(slot) = by_operation.get_mut(op) {
            slot.1 += r.amount;
        }
    }
    by_operation
        .into_iter()
        .map(|(operation, (bf, year))| OperationReserveRow {
            operation,
            method,
            brought_forward: money::unsigned_zero(bf),
            year: money::unsigned_zero(year),
            reserve: money::unsigned_zero(bf + year),
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::super::context::fixture::*;
    use super::*;

    fn part(entity: &str, operation: &str, amount: &str) -> OperationReserve {
        OperationReserve {
            entity: id(entity),
            operation: id(operation),
            period: p("2026-03"),
            method: "step_by_step",
            amount: d(amount),
            intermediate_currency: None,
            amount_intermediate: None,
        }
    }

    /// S brought forward a gain of 50, T a loss of 20. This year T's own part is 5 and
    /// 7 belongs to S's operation (step by step): S 50 + 7 = 57, T -20 + 5 = -15. P's
    /// reserve is 0 (a presentation-currency entity has none).
    #[test]
    fn brought_forward_plus_the_year_by_operation() {
        let w = World::new(
            &["P", "S", "T"],
            &[holding("P", "S", "1", "2020-01-01"), holding("S", "T", "1", "2020-01-01")],
            p("2026-06"),
        );
        let cx = w.context(p("2026-06"), p("2026-01"), Default::default());
        let bf = BTreeMap::from([(id("S"), d("50")), (id("T"), d("-20"))]);
        let parts = [part("T", "T", "5"), part("T", "S", "7")];
        let rows = reserves(&cx, &bf, &parts.iter().collect::<Vec<_>>(), Ifric16Method::StepByStep);
        let got: Vec<(String, String, String, String)> = rows
            .iter()
            .map(|r| {
                (r.operation.to_string(), r.brought_forward.to_string(), r.year.to_string(), r.reserve.to_string())
            })
            .collect();
        assert_eq!(
            got,
            [
                ("P".into(), "0".into(), "0".into(), "0".into()),
                ("S".into(), "50".into(), "7".into(), "57".into()),
                ("T".into(), "-20".into(), "5".into(), "-15".into())
            ]
        );
    }
}

//! Rule `ifric16_step_by_step`: under the step-by-step method the part of an indirect
//! operation's translation difference that arises on retranslating its
//! intermediate-currency figures belongs to the intermediate parent's operation
//! (IFRIC 16.17). The entry moves it in OCI from the entity to its intermediate parent;
//! group totals do not change. Under the direct method every part is the entity's own
//! and nothing is posted.

use std::collections::BTreeMap;

use rust_decimal::Decimal;

use super::context::Context;
use super::journal::{EliminationRule, Journal, line};
use crate::model::EntityId;
use crate::money;
use crate::translate::OperationReserve;

/// The parts of the translation differences that arose in this fiscal year, up to the
/// period.
pub fn parts_of_year<'a>(cx: &Context, parts: &'a [OperationReserve]) -> Vec<&'a OperationReserve> {
    parts.iter().filter(|r| r.period >= cx.fiscal_start && r.period <= cx.period).collect()
}

/// Posts one entry per entity and the operation that owns part of its difference, both
/// consolidated in full.
pub fn post(j: &mut Journal, cx: &Context, year_parts: &[&OperationReserve]) {
    let mut moved: BTreeMap<(EntityId, EntityId), Decimal> = BTreeMap::new();
    for r in year_parts.iter().filter(|r| r.operation != r.entity) {
        *moved.entry((r.entity.clone(), r.operation.clone())).or_default() += r.amount;
    }
    let td = &cx.roles.translation_difference;
    for ((entity, operation), amount) in &moved {
        if !cx.full.contains(entity) || !cx.full.contains(operation) {
            continue;
        }
        // Gains are credits: the intermediate parent takes the credit off the entity.
        j.post(
            EliminationRule::Ifric16StepByStep,
            cx.lcp(entity, operation),
            vec![entity.clone(), operation.clone()],
            format!(
                "translation difference of {entity} on retranslating its figures in {}'s currency belongs to {operation}'s operation: {}",
                operation,
                money::format_amount(*amount, cx.minor)
            ),
            vec![line(td, entity, None, *amount), line(td, operation, None, -*amount)],
        );
    }
}

#[cfg(test)]
mod tests {
    use super::super::context::fixture::*;
    use super::*;

    fn part(entity: &str, operation: &str, period: &str, amount: &str) -> OperationReserve {
        OperationReserve {
            entity: id(entity),
            operation: id(operation),
            period: p(period),
            method: "step_by_step",
            amount: d(amount),
            intermediate_currency: None,
            amount_intermediate: None,
        }
    }

    /// T under S under P. T's gains of 7 (March) and 3 (May) arose on retranslating its
    /// figures in S's currency: both belong to S's operation, 10 in all. The entry debits
    /// T's OCI +10 and credits S's -10. T's own part (2) and last year's part (4,
    /// December 2025) stay where they are.
    #[test]
    fn the_intermediate_parents_part_moves_to_it() {
        let w = World::new(
            &["P", "S", "T"],
            &[holding("P", "S", "1", "2020-01-01"), holding("S", "T", "1", "2020-01-01")],
            p("2026-06"),
        );
        let cx = w.context(p("2026-06"), p("2026-01"), Default::default());
        let all = vec![
            part("T", "S", "2025-12", "4"),
            part("T", "S", "2026-03", "7"),
            part("T", "S", "2026-05", "3"),
            part("T", "T", "2026-05", "2"),
        ];
        let year = parts_of_year(&cx, &all);
        assert_eq!(year.len(), 3);
        let mut j = Journal::default();
        post(&mut j, &cx, &year);
        assert_eq!(j.entries.len(), 1);
        assert_eq!(
            lines(&j.entries[0]),
            [("9000".into(), "T".into(), "10".into()), ("9000".into(), "S".into(), "-10".into())]
        );
        assert_eq!(j.entries[0].posted_at.as_str(), "S");
    }
}

//! Rendering of the group structure: the control tree drawn as a tree, each entity with
//! its holders, control date, effective interest, NCI, method and the reason.

use rust_decimal::Decimal;
use serde::Serialize;

use crate::model::{Entity, Method, Period};
use crate::structure::GroupStructure;

use super::{CAUTION, CsvOut, Format, to_json};

#[derive(Serialize)]
struct Holder {
    owner: String,
    capital_share: Decimal,
    voting_share: Decimal,
}

#[derive(Serialize)]
struct Row {
    id: String,
    name: String,
    currency: String,
    parent: Option<String>,
    holders: Vec<Holder>,
    controlled: bool,
    controlled_from: Option<String>,
    effective_interest: Decimal,
    nci: Decimal,
    method: Method,
    reason: String,
    #[serde(skip)]
    depth: Option<usize>,
}

#[derive(Serialize)]
struct Report {
    period: String,
    as_of: String,
    entities: Vec<Row>,
    caution: &'static str,
}

fn percent(d: Decimal) -> String {
    let mut p = (d * Decimal::from(100)).round_dp(2);
    p = p.normalize();
    format!("{p}%")
}

pub fn render(s: &GroupStructure, entities: &[Entity], period: Period, format: Format) -> String {
    let rows: Vec<Row> = s
        .tree_order()
        .map(|(depth, e)| {
            let meta = entities.iter().find(|x| x.id == e.id);
            Row {
                id: e.id.to_string(),
                name: meta.map(|m| m.name.clone()).unwrap_or_default(),
                currency: meta.map(|m| m.currency.to_string()).unwrap_or_default(),
                parent: e.immediate_parent.as_ref().map(|p| p.to_string()),
                holders: e
                    .direct_holders
                    .iter()
                    .map(|h| Holder {
                        owner: h.owner.to_string(),
                        capital_share: h.capital_share,
                        voting_share: h.voting_share,
                    })
                    .collect(),
                controlled: e.controlled,
                controlled_from: e.controlled_from.map(|d| d.to_string()),
                effective_interest: e.effective_interest,
                nci: e.nci,
                method: e.method,
                reason: e.reason.clone(),
                depth,
            }
        })
        .collect();
    let report = Report { period: period.to_string(), as_of: s.as_of().to_string(), entities: rows, caution: CAUTION };
    match format {
        Format::Json => to_json(&report),
        Format::Csv => {
            let mut out =
                CsvOut::new(&["entity", "parent", "controlled_from", "effective_interest", "nci", "method", "reason"]);
            for r in &report.entities {
                out.row(&[
                    r.id.clone(),
                    r.parent.clone().unwrap_or_default(),
                    r.controlled_from.clone().unwrap_or_default(),
                    r.effective_interest.to_string(),
                    r.nci.to_string(),
                    r.method.as_str().to_string(),
                    r.reason.clone(),
                ]);
            }
            out.finish()
        }
        Format::Table => {
            let mut out = format!("group structure at {} (period {})\n\n", report.as_of, report.period);
            let head = ["entity", "ccy", "held by", "control since", "group", "nci", "method", "reason"];
            let in_tree: Vec<(usize, String)> =
                report.entities.iter().filter_map(|r| r.depth.map(|d| (d, r.id.clone()))).collect();
            let mut drawn = tree_cells(&in_tree).into_iter();
            let mut rows = Vec::new();
            for r in &report.entities {
                let name = match r.depth {
                    Some(_) => drawn.next().unwrap_or_else(|| r.id.clone()),
                    None => format!("·  {}", r.id),
                };
                let held = r
                    .holders
                    .iter()
                    .map(|h| {
                        if h.capital_share == h.voting_share {
                            format!("{} {}", h.owner, percent(h.capital_share))
                        } else {
                            format!("{} {} ({} votes)", h.owner, percent(h.capital_share), percent(h.voting_share))
                        }
                    })
                    .collect::<Vec<_>>()
                    .join(", ");
                rows.push(vec![
                    name,
                    r.currency.clone(),
                    held,
                    r.controlled_from.clone().unwrap_or_default(),
                    percent(r.effective_interest),
                    percent(r.nci),
                    r.method.as_str().to_string(),
                    r.reason.clone(),
                ]);
            }
            out.push_str(&super::text_table(&head, &rows, &[false, false, false, false, true, true, false, false]));
            out.push_str("\n· = outside the control tree (associates, joint ventures, investments)\n");
            out.push('\n');
            out.push_str(&super::caution_text());
            out
        }
    }
}

/// The control tree drawn by termtree, one line per entity in the order given
/// (pre-order, each with its depth below the root), so that each line can head its
/// entity's row.
fn tree_cells(items: &[(usize, String)]) -> Vec<String> {
    fn build(items: &[(usize, String)], i: &mut usize) -> termtree::Tree<String> {
        let (depth, id) = &items[*i];
        let mut tree = termtree::Tree::new(id.clone());
        *i += 1;
        while *i < items.len() && items[*i].0 > *depth {
            tree.push(build(items, i));
        }
        tree
    }
    let mut lines = Vec::new();
    let mut i = 0;
    while i < items.len() {
        let tree = build(items, &mut i);
        lines.extend(tree.to_string().lines().map(str::to_string));
    }
    lines
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn each_child_gets_its_own_connector() {
        let items: Vec<(usize, String)> = [(0, "P"), (1, "A"), (2, "A1"), (1, "B"), (1, "C"), (2, "C1"), (2, "C2")]
            .iter()
            .map(|(d, s)| (*d, s.to_string()))
            .collect();
        let lines = tree_cells(&items);
        assert_eq!(lines, ["P", "├── A", "│   └── A1", "├── B", "└── C", "    ├── C1", "    └── C2"]);
    }
}

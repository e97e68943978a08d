//! Priority lists, in YAML or CSV.

use super::diag::{
    At, BadInput, Ledger, Origin, ProblemKind, RecordKind, SchemaErrors, bad_name_detail,
    name_problem, read_text, shown_name,
};
use super::table::Table;
use super::yaml::{self, Ctx, Value};
use crate::model::{Priority, PriorityList, Requirement};
use std::collections::HashMap;
use std::path::Path;

const TOP_FIELDS: &[&str] = &["priorities"];
const ENTRY_FIELDS: &[&str] = &["name", "weight", "req", "prerelease"];
const CSV_COLUMNS: &[&str] = &["rank", "name", "weight", "req", "prerelease"];

/// A priority entry as written. The values checked after reading keep their lines (a CSV
/// row's for each of its cells), so a problem with one names it.
struct RawEntry {
    line: usize,
    rank: Option<f64>,
    name: String,
    /// The line `name` is written on.
    name_line: usize,
    weight: Option<At<f64>>,
    req: Option<At<String>>,
    prerelease: bool,
    /// A CSV row with no rank in a list whose other rows have one: its place is unknown.
    unranked: bool,
}

/// Reads a priority list; `.csv` files are read as CSV, anything else as YAML.
pub fn read_priorities(path: &Path, ledger: &mut Ledger) -> Result<PriorityList, BadInput> {
    let file = path.display().to_string();
    let raw = if has_extension(path, "csv") {
        read_csv(path)?
    } else {
        read_yaml(&file, &read_text(path)?)?
    };
    assemble(&file, raw, ledger)
}

pub(crate) fn has_extension(path: &Path, ext: &str) -> bool {
    path.extension()
        .is_some_and(|e| e.eq_ignore_ascii_case(ext))
}

/// Reads priority YAML from a string; `file` names it in messages.
pub fn read_priorities_str(
    file: &str,
    text: &str,
    ledger: &mut Ledger,
) -> Result<PriorityList, BadInput> {
    assemble(file, read_yaml(file, text)?, ledger)
}

fn read_yaml(file: &str, text: &str) -> Result<Vec<RawEntry>, BadInput> {
    let doc = yaml::parse(file, text)?;
    let ctx = Ctx { file };
    let top = ctx.map(&doc, "priority list", TOP_FIELDS)?;
    let items = top.seq("priorities")?;
    if items.is_empty() {
        return Err(ctx.err(&doc, "priority list: `priorities` is missing or empty"));
    }
    yaml::collect_errors(items, |node| {
        // A bare name is the short form of an entry.
        if let Value::Scalar(name, _) = &node.value {
            return Ok(RawEntry {
                line: node.line,
                rank: None,
                name: entry_name(file, node.line, name)?,
                name_line: node.line,
                weight: None,
                req: None,
                prerelease: false,
                unranked: false,
            });
        }
        let m = ctx.map(node, "priority entry", ENTRY_FIELDS)?;
        let name = m.required_str_at("name")?;
        Ok(RawEntry {
            line: m.line(),
            rank: None,
            name: entry_name(file, name.line, name.value)?,
            name_line: name.line,
            weight: m.opt_number_at("weight")?,
            req: m
                .opt_text_at("req")?
                .map(|r| At::new(r.value.to_owned(), r.line)),
            prerelease: m.opt_bool("prerelease")?.unwrap_or(false),
            unranked: false,
        })
    })
}

/// A name as the CSV reader gets it from its trimmed cell, so both formats match the same
/// registry names and refuse the same empty ones.
fn entry_name(file: &str, line: usize, written: &str) -> Result<String, BadInput> {
    match written.trim() {
        "" => Err(BadInput::at(file, line, "`name` is empty")),
        name => Ok(name.to_string()),
    }
}

fn read_csv(path: &Path) -> Result<Vec<RawEntry>, BadInput> {
    let mut table = Table::open(path, CSV_COLUMNS, &["name"])?;
    let (c_rank, c_name, c_weight, c_req, c_pre) = (
        table.column("rank"),
        table.column("name"),
        table.column("weight"),
        table.column("req"),
        table.column("prerelease"),
    );
    let mut out = Vec::new();
    let mut errors = SchemaErrors::new();
    while let Some(row) = table.next_row_collecting(&mut errors) {
        let number = |col: Option<usize>, what: &str| -> Result<Option<f64>, BadInput> {
            match row.get(col) {
                None => Ok(None),
                Some(s) => s
                    .parse::<f64>()
                    .ok()
                    .filter(|v| v.is_finite())
                    .map(Some)
                    .ok_or_else(|| {
                        BadInput::at(
                            &table.file,
                            row.line,
                            format!("`{what}`: expected a number, found `{s}`"),
                        )
                    }),
            }
        };
        let entry = (|| {
            let name = entry_name(&table.file, row.line, row.get(c_name).unwrap_or_default())?;
            // The same spellings as the bulk CSV's flags: one reader of CSV true/false.
            let prerelease = match row.get(c_pre) {
                None => false,
                Some(text) => super::table::parse_flag(text).ok_or_else(|| {
                    BadInput::at(
                        &table.file,
                        row.line,
                        format!("`prerelease`: expected true or false, found `{text}`"),
                    )
                })?,
            };
            Ok(RawEntry {
                line: row.line,
                rank: number(c_rank, "rank")?,
                name,
                name_line: row.line,
                weight: number(c_weight, "weight")?.map(|w| At::new(w, row.line)),
                req: row.get(c_req).map(|r| At::new(r.to_owned(), row.line)),
                prerelease,
                unranked: false,
            })
        })();
        out.extend(errors.keep(entry));
    }
    errors.finish()?;
    if out.is_empty() {
        return Err(BadInput::at(
            &table.file,
            table.header_line,
            "no priority entries after the header",
        ));
    }
    // An explicit rank column orders the list; rows keep file order among equal ranks. A row
    // without a rank among ranked ones has no known place: it goes last, with a note, since
    // the order decides which entries a pre-install set keeps.
    if out.iter().any(|e| e.rank.is_some()) {
        for e in out.iter_mut() {
            e.unranked = e.rank.is_none();
        }
        out.sort_by(|a, b| {
            let ra = a.rank.unwrap_or(f64::INFINITY);
            let rb = b.rank.unwrap_or(f64::INFINITY);
            ra.total_cmp(&rb).then(a.line.cmp(&b.line))
        });
    }
    Ok(out)
}

fn assemble(file: &str, raw: Vec<RawEntry>, ledger: &mut Ledger) -> Result<PriorityList, BadInput> {
    let mut seen: HashMap<String, usize> = HashMap::new();
    let mut entries = Vec::new();
    let mut total = 0.0_f64;
    for e in raw {
        ledger.read(RecordKind::Priority);
        let origin = Origin {
            file: file.to_string(),
            line: e.line,
        };
        if let Some(why) = name_problem(&e.name) {
            ledger.leave_out(
                RecordKind::Priority,
                ProblemKind::BadValue,
                Origin {
                    file: file.to_string(),
                    line: e.name_line,
                },
                shown_name(&e.name),
                bad_name_detail("package name", &e.name, why),
            );
            continue;
        }
        if let Some(first) = seen.get(&e.name) {
            ledger.leave_out(
                RecordKind::Priority,
                ProblemKind::DuplicateEntry,
                origin,
                &e.name,
                format!("already listed at line {first}"),
            );
            continue;
        }
        let at = |line| Origin {
            file: file.to_string(),
            line,
        };
        if let Some(w) = e.weight.filter(|w| w.value < 0.0) {
            ledger.leave_out(
                RecordKind::Priority,
                ProblemKind::BadValue,
                at(w.line),
                &e.name,
                format!("weight {} is negative", w.value),
            );
            continue;
        }
        if let Some(r) = e.req.as_ref().filter(|r| r.value.trim().is_empty()) {
            ledger.note(
                ProblemKind::EmptyRequirement,
                at(r.line),
                &e.name,
                "requirement is empty: read as any version",
            );
        }
        let req = match &e.req {
            None => None,
            Some(r) => match Requirement::parse(&r.value) {
                Ok(req) => Some(req),
                Err(why) => {
                    ledger.leave_out(
                        RecordKind::Priority,
                        ProblemKind::UnreadableRequirement,
                        at(r.line),
                        &e.name,
                        why,
                    );
                    continue;
                }
            },
        };
        // A weight written `-0` is zero; adding zero drops the sign, which every document
        // that carries the weight would print.
        let weight = e.weight.map_or(1.0, |w| w.value + 0.0);
        total += weight;
        if !total.is_finite() {
            // Every share of the weight is divided by the total: past the largest f64 the
            // shares come out NaN.
            return Err(BadInput::at(
                file,
                e.weight.map_or(e.line, |w| w.line),
                "the weights up to this entry add up to more than 1.7e308, the largest number \
                 basefit can hold; the weights of a priority list must add up to a finite number",
            ));
        }
        if e.unranked {
            ledger.note(
                ProblemKind::UnrankedEntry,
                origin.clone(),
                &e.name,
                "`rank` is empty where other rows have one: placed after every ranked row \
                 (give it a rank to place it)",
            );
        }
        seen.insert(e.name.clone(), e.line);
        ledger.used(RecordKind::Priority);
        entries.push(Priority {
            rank: entries.len() + 1,
            name: e.name,
            weight,
            req,
            prerelease: e.prerelease,
            origin,
        });
    }
    // Every share of the weight divides by the total, so with all weights zero no share can
    // be computed; the list still plans, so this is a note rather than a refusal
    // (`fuse --method share-sum` writes such a list when every source scores zero).
    if let Some(first) = entries.first()
        && total == 0.0
    {
        ledger.note(
            ProblemKind::AllWeightsZero,
            first.origin.clone(),
            "priorities",
            format!(
                "{} weight 0: no share of priority weight can be computed (shown as n/a)",
                match entries.len() {
                    1 => "its only entry has".to_string(),
                    n => format!("all {n} entries have"),
                }
            ),
        );
    }
    Ok(PriorityList { entries })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// One entry of weight 0 reads in the singular, as a package whose only version is yanked
    /// does: "all 1 entries" reads as a slip.
    #[test]
    fn all_weights_zero_counts_a_lone_entry_in_the_singular() {
        let detail = |text: &str| {
            let mut ledger = Ledger::default();
            read_priorities_str("p.yaml", text, &mut ledger).unwrap();
            ledger.problems[0].detail.clone()
        };
        assert_eq!(
            detail("priorities:\n  - {name: wattle, weight: 0}\n"),
            "its only entry has weight 0: no share of priority weight can be computed \
             (shown as n/a)"
        );
        assert!(
            detail("priorities:\n  - {name: wattle, weight: 0}\n  - {name: gumleaf, weight: 0}\n")
                .starts_with("all 2 entries have weight 0:")
        );
    }

    /// README, "Priority list": with a `rank` column the list follows it, equal ranks keeping
    /// file order (so of a name given twice at one rank the earlier row is kept); the entries
    /// kept are then numbered from 1 in that order, the one left out taking no number. From a
    /// mutation review: neither the tie order nor the numbering was guarded.
    #[test]
    fn equal_ranks_keep_file_order_and_entries_count_from_one() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("p.csv");
        std::fs::write(
            &path,
            "rank,name\n2,gumleaf\n1,wattle\n2,fernwood\n2,gumleaf\n1,bottlebrush\n",
        )
        .unwrap();
        let mut ledger = Ledger::default();
        let list = read_priorities(&path, &mut ledger).unwrap();
        let got: Vec<(usize, &str, usize)> = list
            .entries
            .iter()
            .map(|e| (e.rank, e.name.as_str(), e.origin.line))
            .collect();
        assert_eq!(
            got,
            [
                (1, "wattle", 3),
                (2, "bottlebrush", 6),
                (3, "gumleaf", 2),
                (4, "fernwood", 4)
            ]
        );
        let left_out: Vec<(usize, &str)> = ledger
            .problems
            .iter()
            .map(|p| (p.origin.line, p.detail.as_str()))
            .collect();
        assert_eq!(left_out, [(5, "already listed at line 2")]);
    }
}

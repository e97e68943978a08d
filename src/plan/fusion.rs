//! Rank fusion: one priority list from several ranked or scored source lists.
//!
//! No single measure of a package's importance is right on its own: download counts favour
//! packages pulled in by CI machines, dependent counts favour small helpers, curated lists go
//! stale. Fusing several lists lets a package that is high on most of them come first even
//! when no single list puts it there.
//!
//! A source list is a CSV file with a `name` column and a `rank` or a `score` column (see
//! [`read_source_csv`]). Both kinds become positions first: only the order inside a list
//! matters to the rank-based methods, so lists with incomparable numbers (downloads per day,
//! stars, dependents) can be fused. [`Method::ShareSum`] is the exception and uses the scores
//! themselves, as shares of each list's total.
//!
//! ```
//! use basefit::plan::fusion::{fuse, Method, Missing, SourceList};
//! let downloads = SourceList::scored("downloads", [("web", 900.0), ("db", 500.0), ("log", 20.0)])?;
//! let curated = SourceList::ranked("curated", ["db", "log", "web"])?;
//! let fused = fuse(&[downloads, curated], Method::Borda, Missing::WorstPlusOne)?;
//! let order: Vec<&str> = fused.iter().map(|f| f.name.as_str()).collect();
//! // db: 1 + 2 points, web: 2 + 0, log: 0 + 1 (three names, so rank r earns 3 - r).
//! assert_eq!(order, ["db", "web", "log"]);
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```

use crate::load::diag::{
    BadInput, Ledger, Origin, ProblemKind, RecordKind, bad_name_detail, name_problem, shown_name,
};
use crate::load::table::{Row, Table};
use crate::model::ReleaseDate;
use std::collections::{BTreeMap, HashMap};
use std::fmt;
use std::fmt::Write as _;
use std::path::Path;

const COLUMNS: &[&str] = &["name", "rank", "score", "date"];

/// An inclusive range of days; rows dated outside it are left out of a scored list.
///
/// ```
/// use basefit::model::ReleaseDate;
/// use basefit::plan::fusion::Window;
/// let march = Window {
///     from: ReleaseDate::parse("2024-03-01").unwrap(),
///     to: ReleaseDate::parse("2024-03-31").unwrap(),
/// };
/// assert!(march.contains(ReleaseDate::parse("2024-03-31").unwrap()));
/// assert!(!march.contains(ReleaseDate::parse("2024-04-01").unwrap()));
/// ```
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Window {
    pub from: ReleaseDate,
    pub to: ReleaseDate,
}

impl Window {
    /// Reads `FROM..TO` (days as YYYY-MM-DD, both included). A window that ends before it
    /// starts would leave every dated row out, so it is refused.
    ///
    /// ```
    /// use basefit::plan::fusion::Window;
    /// assert!(Window::parse("2024-03-01..2024-03-31").is_ok());
    /// assert!(Window::parse("2024-03-01..2024-03-01").is_ok());
    /// assert!(Window::parse("2024-12-31..2024-01-01").unwrap_err().contains("ends before"));
    /// assert!(Window::parse("2024-03-01").is_err());
    /// ```
    pub fn parse(s: &str) -> Result<Window, String> {
        let (a, b) = s
            .split_once("..")
            .ok_or("expected FROM..TO, e.g. 2026-01-01..2026-06-30")?;
        let date =
            |t: &str| ReleaseDate::parse(t).ok_or(format!("`{t}` is not a date (YYYY-MM-DD)"));
        let window = Window {
            from: date(a)?,
            to: date(b)?,
        };
        if window.from > window.to {
            return Err(format!("`{s}`: the window ends before it starts"));
        }
        Ok(window)
    }

    /// Whether `day` is in the window, both ends included.
    pub fn contains(&self, day: ReleaseDate) -> bool {
        self.from <= day && day <= self.to
    }
}

impl fmt::Display for Window {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{} to {}", self.from, self.to)
    }
}

/// One package of a source list.
#[derive(Debug, Clone, PartialEq)]
pub struct SourceEntry {
    pub name: String,
    /// 1-based position; entries that tie share the mean of the positions they span (two
    /// entries tied for first both get 1.5), so the ranks of a list of n entries always sum
    /// to n(n+1)/2 however ties fall.
    pub rank: f64,
    /// The score (summed over rows for a scored list); `None` when the list gives none.
    pub score: Option<f64>,
}

/// A ranked list of packages from one source, best first.
///
/// Built by [`read_source_csv`] or by [`SourceList::ranked`] and [`SourceList::scored`];
/// the fields stay private so every list keeps the rank invariant that [`fuse`] relies on
/// (ranks between 1 and the list's length, finite non-negative scores).
#[derive(Debug, Clone, PartialEq)]
pub struct SourceList {
    file: String,
    entries: Vec<SourceEntry>,
    /// Where the list first lacks a score, when it does: what [`FuseError::NotScored`] says.
    unscored: Option<Unscored>,
}

/// The first place a list lacks a score: a line of its file when it was read from one.
#[derive(Debug, Clone, PartialEq)]
struct Unscored {
    line: Option<usize>,
    detail: String,
}

impl SourceList {
    /// A list in the given order, best first. A name given twice or an empty name is an
    /// error: a ranking cannot place one package at two positions.
    ///
    /// ```
    /// use basefit::plan::fusion::SourceList;
    /// let list = SourceList::ranked("curated", ["a", "b"]).unwrap();
    /// assert_eq!(list.entries()[1].rank, 2.0);
    /// assert!(SourceList::ranked("curated", ["a", "a"]).is_err());
    /// ```
    pub fn ranked<I, S>(file: impl Into<String>, names: I) -> Result<SourceList, BadInput>
    where
        I: IntoIterator<Item = S>,
        S: Into<String>,
    {
        let file = file.into();
        let mut seen: HashMap<String, usize> = HashMap::new();
        let mut rows = Vec::new();
        for (i, name) in names.into_iter().enumerate() {
            let name = name.into();
            if name.is_empty() {
                return Err(BadInput::file(
                    &file,
                    format!("entry {} has an empty name", i + 1),
                ));
            }
            if let Some(first) = seen.insert(name.clone(), i + 1) {
                return Err(BadInput::file(
                    &file,
                    format!("`{name}` is listed at positions {first} and {}", i + 1),
                ));
            }
            rows.push((name, (i + 1) as f64, None));
        }
        let mut list = assign_ranks(file, rows, Order::Ascending);
        list.unscored = Some(Unscored {
            line: None,
            detail: "the list has no scores".to_string(),
        });
        Ok(list)
    }

    /// A list ordered by score, highest first; a name given more than once has its scores
    /// summed (daily counts become a total). Scores must be finite and not negative.
    ///
    /// ```
    /// use basefit::plan::fusion::SourceList;
    /// let list = SourceList::scored("dl", [("a", 1.0), ("b", 5.0), ("a", 7.0)]).unwrap();
    /// assert_eq!(list.entries()[0].name, "a");
    /// assert_eq!(list.entries()[0].score, Some(8.0));
    /// ```
    pub fn scored<I, S>(file: impl Into<String>, scores: I) -> Result<SourceList, BadInput>
    where
        I: IntoIterator<Item = (S, f64)>,
        S: Into<String>,
    {
        let file = file.into();
        let mut sums: BTreeMap<String, f64> = BTreeMap::new();
        for (name, score) in scores {
            let name = name.into();
            if name.is_empty() {
                return Err(BadInput::file(&file, "an entry has an empty name"));
            }
            if !score.is_finite() || score < 0.0 {
                return Err(BadInput::file(
                    &file,
                    format!("`{name}`: score {score} is not a finite non-negative number"),
                ));
            }
            let sum = sums.entry(name.clone()).or_insert(0.0);
            if !(*sum + score).is_finite() {
                return Err(BadInput::file(
                    &file,
                    format!("`{name}`: summed score exceeds the largest representable number"),
                ));
            }
            *sum += score;
        }
        Ok(from_sums(file, sums))
    }

    /// The file (or other source) the list came from, for messages and provenance.
    pub fn file(&self) -> &str {
        &self.file
    }

    /// The entries, best first; tied entries in name order.
    pub fn entries(&self) -> &[SourceEntry] {
        &self.entries
    }

    pub fn len(&self) -> usize {
        self.entries.len()
    }

    pub fn is_empty(&self) -> bool {
        self.entries.is_empty()
    }

    /// Whether every entry has a score, as [`Method::ShareSum`] needs.
    pub fn is_scored(&self) -> bool {
        self.entries.iter().all(|e| e.score.is_some())
    }
}

#[derive(Clone, Copy)]
enum Order {
    Ascending,
    Descending,
}

/// Sorts rows by their key and gives tied keys the mean of their positions. Ties are then
/// listed by name so the order of a list never depends on the order of its rows.
fn assign_ranks(
    file: String,
    mut rows: Vec<(String, f64, Option<f64>)>,
    order: Order,
) -> SourceList {
    rows.sort_by(|a, b| {
        let by_key = match order {
            Order::Ascending => a.1.total_cmp(&b.1),
            Order::Descending => b.1.total_cmp(&a.1),
        };
        by_key.then_with(|| a.0.cmp(&b.0))
    });
    let mut ranks = vec![0.0; rows.len()];
    let mut start = 0;
    while start < rows.len() {
        let mut end = start;
        while end + 1 < rows.len() && rows[end + 1].1 == rows[start].1 {
            end += 1;
        }
        // Mean of the 1-based positions start+1 ..= end+1.
        let rank = (start + end + 2) as f64 / 2.0;
        ranks[start..=end].fill(rank);
        start = end + 1;
    }
    let entries = rows
        .into_iter()
        .zip(ranks)
        .map(|((name, _, score), rank)| SourceEntry { name, rank, score })
        .collect();
    SourceList {
        file,
        entries,
        unscored: None,
    }
}

fn from_sums(file: String, sums: BTreeMap<String, f64>) -> SourceList {
    let rows = sums.into_iter().map(|(n, s)| (n, s, Some(s))).collect();
    assign_ranks(file, rows, Order::Descending)
}

/// Reads a source list from CSV; see [`read_source_csv_within`] for the format.
pub fn read_source_csv(path: &Path, ledger: &mut Ledger) -> Result<SourceList, BadInput> {
    read_source_csv_within(path, None, ledger)
}

/// Reads a source list from CSV, keeping only rows dated inside `window` when one is given.
///
/// Columns: `name` (required), `rank`, `score`, `date` (`YYYY-MM-DD`); at least one of
/// `rank` and `score` must be present.
///
/// * With a `rank` column the file is a ranking: rows are ordered by `rank` (only the order
///   counts, so gaps close and equal ranks tie), each name may appear once, and a `score`
///   column, if present, is kept for [`Method::ShareSum`].
/// * With only a `score` column the file is a set of measurements: a name may appear on many
///   rows (one per day, say) and its scores are summed; the list is ordered by the sums,
///   highest first.
///
/// Every row is counted in `ledger` as a [`RecordKind::SourceEntry`], either used or left
/// out with a problem: an empty name, a number that cannot be read or is negative, the
/// worse-ranked row of a name a ranking gives twice (the later one on a tie), an unreadable
/// or missing date when a window is given ([`ProblemKind::BadValue`]), a date outside the window ([`ProblemKind::OutsideWindow`]).
/// Without a window an unreadable date is only noted ([`ProblemKind::UnreadableDate`]), since
/// the date is not needed. The ledger is only written when the whole file could be read, so a
/// file that fails part-way leaves no half-counted rows behind.
///
/// Errors: an unreadable file, bad CSV, an unknown column (with the closest known name), a
/// missing `name` column, neither `rank` nor `score`, a window without a `date` column, or no
/// data rows at all.
pub fn read_source_csv_within(
    path: &Path,
    window: Option<Window>,
    ledger: &mut Ledger,
) -> Result<SourceList, BadInput> {
    let table = Table::open(path, COLUMNS, &["name"])?;
    read_table(table, window, ledger)
}

/// Reads a source list from CSV text; `file` names it in messages.
///
/// ```
/// use basefit::Ledger;
/// use basefit::plan::fusion::read_source_str;
/// let mut ledger = Ledger::default();
/// let text = "name,score\nweb,10\ndb,-1\nweb,5\n";
/// let list = read_source_str("dl.csv", text, None, &mut ledger).unwrap();
/// assert_eq!(list.entries()[0].score, Some(15.0));
/// assert_eq!(ledger.problems[0].origin.to_string(), "dl.csv:3");
/// ```
pub fn read_source_str(
    file: &str,
    text: &str,
    window: Option<Window>,
    ledger: &mut Ledger,
) -> Result<SourceList, BadInput> {
    let input = Box::new(std::io::Cursor::new(text.as_bytes().to_vec()));
    let table = Table::from_reader(file, input, COLUMNS, &["name"])?;
    read_table(table, window, ledger)
}

/// Column positions of a source table.
struct Columns {
    name: Option<usize>,
    rank: Option<usize>,
    score: Option<usize>,
    date: Option<usize>,
}

/// What one row contributes once it passes every check.
struct Good {
    name: String,
    rank: Option<f64>,
    score: Option<f64>,
}

/// Why a row is left out: the problem kind and the detail for the report.
type Bad = (ProblemKind, String);

fn read_table(
    mut table: Table,
    window: Option<Window>,
    ledger: &mut Ledger,
) -> Result<SourceList, BadInput> {
    let file = table.file.clone();
    let cols = Columns {
        name: table.column("name"),
        rank: table.column("rank"),
        score: table.column("score"),
        date: table.column("date"),
    };
    if cols.rank.is_none() && cols.score.is_none() {
        return Err(BadInput::at(
            &file,
            table.header_line,
            "a source list needs a `rank` or a `score` column; found neither",
        ));
    }
    if let (Some(w), None) = (window, cols.date) {
        return Err(BadInput::at(
            &file,
            table.header_line,
            format!("a time window ({w}) was given but the file has no `date` column"),
        ));
    }
    let ranked = cols.rank.is_some();
    let mut local = Ledger::default();
    let mut rows_read = 0usize;
    let mut ranked_rows: Vec<(String, f64, Option<f64>)> = Vec::new();
    // Each ranked name's kept row: its line and its place in `ranked_rows`.
    let mut kept_at: HashMap<String, (usize, usize)> = HashMap::new();
    let mut sums: BTreeMap<String, f64> = BTreeMap::new();
    // A ranking may leave scores out; share-sum then needs to say where.
    let mut unscored = match (ranked, cols.score) {
        (true, None) => Some(Unscored {
            line: Some(table.header_line),
            detail: "the list has no `score` column".to_string(),
        }),
        _ => None,
    };
    while let Some(row) = table.next_row()? {
        rows_read += 1;
        local.read(RecordKind::SourceEntry);
        let origin = Origin {
            file: file.clone(),
            line: row.line,
        };
        let subject = match row.get(cols.name) {
            None => "(no name)".to_string(),
            Some(name) if name_problem(name).is_some() => shown_name(name),
            Some(name) => name.to_string(),
        };
        let checked = check_row(&row, &cols, window, ranked).and_then(|good| {
            if let (Some(rank), Some(&(line, slot))) = (good.rank, kept_at.get(&good.name)) {
                // A name ranked twice keeps its better place (the first on a tie), and the
                // other row is the one reported: an export that lists a package under two
                // spellings of one query should not sink it to its worse position.
                if rank >= ranked_rows[slot].1 {
                    return Err((
                        ProblemKind::DuplicateEntry,
                        format!("ranked better or equal at line {line}"),
                    ));
                }
                local.leave_out(
                    RecordKind::SourceEntry,
                    ProblemKind::DuplicateEntry,
                    Origin {
                        file: file.clone(),
                        line,
                    },
                    good.name.clone(),
                    format!("ranked better at line {}", row.line),
                );
                // The earlier row was counted as used; the new one takes its place.
                local.unuse(RecordKind::SourceEntry);
            } else if !ranked {
                let sum = sums.get(&good.name).copied().unwrap_or(0.0);
                if !(sum + good.score.unwrap_or(0.0)).is_finite() {
                    return Err((
                        ProblemKind::BadValue,
                        "summed score exceeds the largest representable number".to_string(),
                    ));
                }
            }
            Ok(good)
        });
        match checked {
            Ok(good) => {
                local.used(RecordKind::SourceEntry);
                if let Some(detail) = unread_date_note(&row, &cols, window) {
                    local.note(ProblemKind::UnreadableDate, origin, &subject, detail);
                }
                // `check_row` gives a rank exactly when the file is a ranking.
                match good.rank {
                    Some(rank) => {
                        let slot = match kept_at.get(&good.name) {
                            Some(&(_, slot)) => slot,
                            None => {
                                ranked_rows.push((String::new(), 0.0, None));
                                ranked_rows.len() - 1
                            }
                        };
                        kept_at.insert(good.name.clone(), (row.line, slot));
                        ranked_rows[slot] = (good.name, rank, good.score);
                    }
                    None => {
                        *sums.entry(good.name).or_insert(0.0) += good.score.unwrap_or(0.0);
                    }
                }
            }
            Err((kind, detail)) => {
                local.leave_out(RecordKind::SourceEntry, kind, origin, subject, detail)
            }
        }
    }
    if rows_read == 0 {
        return Err(BadInput::at(
            &file,
            table.header_line,
            "no entries after the header",
        ));
    }
    ledger.merge(local);
    // The first kept row without a score, by line: a row a better-ranked one replaced is not
    // the one share-sum would miss.
    if unscored.is_none()
        && let Some((line, name)) = kept_at
            .iter()
            .filter(|(_, (_, slot))| ranked_rows[*slot].2.is_none())
            .map(|(name, (line, _))| (*line, name))
            .min()
    {
        unscored = Some(Unscored {
            line: Some(line),
            detail: format!("`{name}` has an empty `score`"),
        });
    }
    let mut list = if ranked {
        assign_ranks(file, ranked_rows, Order::Ascending)
    } else {
        from_sums(file, sums)
    };
    list.unscored = unscored;
    Ok(list)
}

fn check_row(row: &Row, cols: &Columns, window: Option<Window>, ranked: bool) -> Result<Good, Bad> {
    let name = row
        .get(cols.name)
        .ok_or((ProblemKind::BadValue, "`name` is empty".to_string()))?;
    // Refused here as the priority reader refuses it, so a fused list reads back whole.
    if let Some(why) = name_problem(name) {
        return Err((
            ProblemKind::BadValue,
            bad_name_detail("package name", name, why),
        ));
    }
    if let Some(w) = window {
        let cell = row.get(cols.date).ok_or((
            ProblemKind::BadValue,
            format!("`date` is empty, so the row cannot be placed in the window {w}"),
        ))?;
        let day = ReleaseDate::parse(cell).ok_or((
            ProblemKind::BadValue,
            format!("`date`: expected YYYY-MM-DD, found `{cell}`"),
        ))?;
        if !w.contains(day) {
            return Err((
                ProblemKind::OutsideWindow,
                format!("dated {day}, outside the window {w}"),
            ));
        }
    }
    let rank = if ranked {
        let cell = row
            .get(cols.rank)
            .ok_or((ProblemKind::BadValue, "`rank` is empty".to_string()))?;
        Some(number(cell, "rank")?)
    } else {
        None
    };
    let score = match row.get(cols.score) {
        Some(cell) => Some(number(cell, "score")?),
        None if ranked => None,
        None => return Err((ProblemKind::BadValue, "`score` is empty".to_string())),
    };
    Ok(Good {
        name: name.to_string(),
        rank,
        score,
    })
}

/// The note for a date that cannot be read when no window needs it; the row is still used.
fn unread_date_note(row: &Row, cols: &Columns, window: Option<Window>) -> Option<String> {
    if window.is_some() {
        return None;
    }
    let cell = row.get(cols.date)?;
    match ReleaseDate::parse(cell) {
        Some(_) => None,
        None => Some(format!("`date`: expected YYYY-MM-DD, found `{cell}`")),
    }
}

fn number(cell: &str, column: &str) -> Result<f64, Bad> {
    match cell.parse::<f64>() {
        Ok(v) if v.is_finite() && v < 0.0 => Err((
            ProblemKind::BadValue,
            format!("`{column}` {cell} is negative"),
        )),
        // Adding zero turns -0 into 0, so "-0" and "0" tie instead of sorting apart.
        Ok(v) if v.is_finite() => Ok(v + 0.0),
        _ => Err((
            ProblemKind::BadValue,
            format!("`{column}`: expected a number, found `{cell}`"),
        )),
    }
}

/// How positions in the source lists become one score per package.
///
/// Throughout, `r` is a package's rank in one list (1-based, ties share the mean position),
/// `len` that list's length and `n` the number of distinct names across all lists.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Method {
    /// Sum of ranks; the lowest total comes first (common practice, no source). Under
    /// [`Missing::Exclude`] the mean rank over the lists that hold the package is used
    /// instead of the sum, since a sum would reward being absent.
    RankSum,
    /// Borda count: rank `r` earns `n - r` points, most points first. This is the variant of
    /// the Wikipedia "Borda count" article's worked example (first of four earns 3, last
    /// earns 0). Taking `n` over all lists rather than per list gives every list's top entry
    /// the same points, so a long list does not outweigh a short one.
    Borda,
    /// Reciprocal rank fusion (Cormack, Clarke and Buettcher, SIGIR 2009): the sum of
    /// `1 / (k + r)`, highest first. The paper uses k = 60; see [`Method::RECIPROCAL`].
    Reciprocal { k: f64 },
    /// Each list's scores as shares of that list's total, summed; highest first. Uses the
    /// scores themselves, so every list must have them.
    ShareSum,
}

impl Method {
    /// Reciprocal rank fusion with the paper's k = 60.
    pub const RECIPROCAL: Method = Method::Reciprocal { k: 60.0 };

    /// Whether a higher score is better (all methods but [`Method::RankSum`]).
    pub fn higher_is_better(&self) -> bool {
        !matches!(self, Method::RankSum)
    }

    /// A short name for reports and file headers.
    pub fn label(&self) -> String {
        match self {
            Method::RankSum => "rank-sum".to_string(),
            Method::Borda => "borda".to_string(),
            Method::Reciprocal { k } => format!("reciprocal (k = {k})"),
            Method::ShareSum => "share-sum".to_string(),
        }
    }
}

/// What a package absent from a list gets from that list.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Missing {
    /// Rank `len + 1`, just behind the list's last entry: [`Method::RankSum`] adds `len + 1`,
    /// [`Method::Borda`] gives `n - len - 1` points (fewer than any listed entry, never
    /// negative), [`Method::Reciprocal`] adds `1 / (k + len + 1)`. [`Method::ShareSum`] gives
    /// a share of 0: the list recorded nothing for the package.
    WorstPlusOne,
    /// The list does not score the package at all: it adds nothing to the Borda, reciprocal
    /// and share sums, and [`Method::RankSum`] averages over the lists that hold the package.
    /// A package on one list at rank 2 then beats one ranked 3 on every list; check
    /// [`Fused::lists_present`] before trusting such a lead.
    Exclude,
}

impl Missing {
    pub fn label(&self) -> &'static str {
        match self {
            Missing::WorstPlusOne => "worst-plus-one",
            Missing::Exclude => "exclude",
        }
    }
}

/// One package of the fused list.
#[derive(Debug, Clone, PartialEq)]
pub struct Fused {
    pub name: String,
    /// The method's score: a rank total or mean for [`Method::RankSum`] (lower is better),
    /// points, a reciprocal sum or a share sum for the others (higher is better).
    pub score: f64,
    /// How many source lists hold the package.
    pub lists_present: usize,
    /// 1-based position in the fused list; equal scores are ordered by name, so no two
    /// packages share a position.
    pub rank: usize,
}

/// Why lists cannot be fused.
#[derive(Debug, Clone, PartialEq)]
pub enum FuseError {
    /// [`Method::ShareSum`] was asked for but a list has entries without a score: `line` is
    /// where its file first lacks one (the header when it has no `score` column), when the
    /// list was read from a file, and `detail` says what is missing there.
    NotScored {
        file: String,
        line: Option<usize>,
        detail: String,
    },
    /// The reciprocal constant `k` must be finite and not negative.
    BadConstant { k: f64 },
}

impl fmt::Display for FuseError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            FuseError::NotScored { file, line, .. } => {
                match line {
                    Some(line) => write!(f, "{file}:{line}: ")?,
                    None => write!(f, "{file}: ")?,
                }
                f.write_str(&self.message())
            }
            FuseError::BadConstant { k } => write!(
                f,
                "the reciprocal rank fusion constant k must be a finite number of at least 0, \
                 not {k}"
            ),
        }
    }
}

impl FuseError {
    /// What is wrong, without the file and line of [`FuseError::NotScored`].
    pub fn message(&self) -> String {
        match self {
            FuseError::NotScored { detail, .. } => format!(
                "share-sum fusion needs a score for every entry, but {detail}; use a rank-based \
                 method or give every entry a score"
            ),
            FuseError::BadConstant { .. } => self.to_string(),
        }
    }
}

impl std::error::Error for FuseError {}

/// Fuses `lists` into one list, best first.
///
/// The result holds every name of every list exactly once. A list with no entries (every row
/// left out, or outside a `--window`) takes no part: it has nothing to say about any name,
/// yet under [`Missing::WorstPlusOne`] it would give each an absent rank and shift every
/// weight. Scores do not depend on the order of `lists`: each package's per-list terms are
/// summed smallest first, so the same terms give the same bits whichever list they came from.
/// Equal scores are ordered by name (byte order).
///
/// ```
/// use basefit::plan::fusion::{fuse, Method, Missing, SourceList};
/// let a = SourceList::ranked("a", ["x", "y"])?;
/// let b = SourceList::ranked("b", ["y", "z"])?;
/// let fused = fuse(&[a, b], Method::RankSum, Missing::WorstPlusOne)?;
/// // x: 1 + 3, y: 2 + 1, z: 3 + 2 (absent from a list of two counts as rank 3).
/// assert_eq!(fused[0].name, "y");
/// assert_eq!(fused[0].score, 3.0);
/// # Ok::<(), Box<dyn std::error::Error>>(())
/// ```
pub fn fuse(
    lists: &[SourceList],
    method: Method,
    missing: Missing,
) -> Result<Vec<Fused>, FuseError> {
    if let Method::Reciprocal { k } = method
        && !(k.is_finite() && k >= 0.0)
    {
        return Err(FuseError::BadConstant { k });
    }
    if method == Method::ShareSum
        && let Some(list) = lists.iter().find(|l| !l.is_scored())
    {
        let unscored = list.unscored.clone().unwrap_or_else(|| Unscored {
            line: None,
            detail: "some entries have no score".to_string(),
        });
        return Err(FuseError::NotScored {
            file: list.file.clone(),
            line: unscored.line,
            detail: unscored.detail,
        });
    }
    let lists: Vec<&SourceList> = lists.iter().filter(|l| !l.is_empty()).collect();
    let mut terms: BTreeMap<&str, (Vec<f64>, usize)> = BTreeMap::new();
    for list in &lists {
        for e in &list.entries {
            terms.entry(e.name.as_str()).or_default();
        }
    }
    let n = terms.len() as f64;
    for list in &lists {
        let position: HashMap<&str, usize> = list
            .entries
            .iter()
            .enumerate()
            .map(|(i, e)| (e.name.as_str(), i))
            .collect();
        let shares = match method {
            Method::ShareSum => shares(list),
            _ => Vec::new(),
        };
        let absent_rank = list.entries.len() as f64 + 1.0;
        for (name, (package_terms, present)) in terms.iter_mut() {
            let found = position.get(name).copied();
            if found.is_some() {
                *present += 1;
            }
            let term = match (method, found, missing) {
                (Method::ShareSum, Some(i), _) => shares[i],
                (Method::ShareSum, None, _) | (_, None, Missing::Exclude) => continue,
                (_, Some(i), _) => rank_term(method, list.entries[i].rank, n),
                (_, None, Missing::WorstPlusOne) => rank_term(method, absent_rank, n),
            };
            package_terms.push(term);
        }
    }
    let mut fused: Vec<Fused> = terms
        .into_iter()
        .map(|(name, (mut package_terms, present))| {
            package_terms.sort_by(f64::total_cmp);
            let sum: f64 = package_terms.iter().sum();
            let score = match (method, missing) {
                // Every name is on at least one list, so there is at least one term.
                (Method::RankSum, Missing::Exclude) => sum / package_terms.len().max(1) as f64,
                _ => sum,
            };
            Fused {
                name: name.to_string(),
                score,
                lists_present: present,
                rank: 0,
            }
        })
        .collect();
    let higher = method.higher_is_better();
    fused.sort_by(|a, b| {
        let by_score = if higher {
            b.score.total_cmp(&a.score)
        } else {
            a.score.total_cmp(&b.score)
        };
        by_score.then_with(|| a.name.cmp(&b.name))
    });
    for (i, f) in fused.iter_mut().enumerate() {
        f.rank = i + 1;
    }
    Ok(fused)
}

fn rank_term(method: Method, rank: f64, n: f64) -> f64 {
    match method {
        Method::RankSum => rank,
        // `rank` never exceeds n: a list holds at most n names, and an absent package's
        // len + 1 only arises when some name is missing from the list, so len < n.
        Method::Borda => n - rank,
        Method::Reciprocal { k } => 1.0 / (k + rank),
        Method::ShareSum => 0.0,
    }
}

/// Each entry's score as a share of the list's total, in entry order. Scores are divided by
/// the largest first so the total cannot overflow; a list whose scores are all zero gives
/// every entry a share of zero (it measured nothing).
fn shares(list: &SourceList) -> Vec<f64> {
    let scores: Vec<f64> = list
        .entries
        .iter()
        .map(|e| e.score.unwrap_or(0.0))
        .collect();
    let max = scores.iter().copied().fold(0.0, f64::max);
    if max <= 0.0 {
        return vec![0.0; scores.len()];
    }
    let scaled: Vec<f64> = scores.iter().map(|s| s / max).collect();
    let total: f64 = scaled.iter().sum();
    scaled.iter().map(|s| s / total).collect()
}

/// The priority weight of each fused package, in the same order: positive numbers up to 1.0
/// (the best package), higher meaning more important.
///
/// * [`Method::RankSum`]: best score / score, since a smaller rank total is better; a package
///   whose total is twice the best gets 0.5.
/// * The others: score / best score. A package that earns nothing (Borda points of 0 on
///   every list, or a share of 0) gets weight 0, which is what the method says of it.
///
/// When the best score is 0 the method separates nothing, and every weight is 1.0.
///
/// ```
/// use basefit::plan::fusion::{fuse, priority_weights, Method, Missing, SourceList};
/// let a = SourceList::ranked("a", ["x", "y", "z"])?;
/// let fused = fuse(&[a], Method::Borda, Missing::WorstPlusOne)?;
/// assert_eq!(priority_weights(&fused, Method::Borda), [1.0, 0.5, 0.0]);
/// # Ok::<(), Box<dyn std::error::Error>>(())
/// ```
pub fn priority_weights(fused: &[Fused], method: Method) -> Vec<f64> {
    let best = fused.first().map(|f| f.score).unwrap_or(0.0);
    fused
        .iter()
        .map(|f| {
            if method.higher_is_better() {
                if best > 0.0 { f.score / best } else { 1.0 }
            } else if f.score > 0.0 && best > 0.0 {
                best / f.score
            } else {
                1.0
            }
        })
        .collect()
}

/// Writes the fused list as basefit's priority YAML (`priorities:` entries with `name` and
/// `weight`, in fused order), with a comment header naming the sources and the method.
///
/// Names are written as YAML double-quoted scalars with every character that YAML does not
/// allow raw escaped, so names like `null`, `- x`, `a: b` or ones holding quotes and line
/// breaks read back unchanged. Weights come from [`priority_weights`] and are written in
/// Rust's shortest round-trip form, so the text is the same on every run. An empty `fused`
/// gives `priorities: []`, which basefit's priority reader rejects as empty.
///
/// ```
/// use basefit::plan::fusion::{fuse, to_priority_yaml, Method, Missing, SourceList};
/// let lists = [SourceList::ranked("top.csv", ["web", "db"])?];
/// let fused = fuse(&lists, Method::RankSum, Missing::WorstPlusOne)?;
/// let yaml = to_priority_yaml(&fused, Method::RankSum, Missing::WorstPlusOne, &lists);
/// assert!(yaml.ends_with("priorities:\n  - name: \"web\"\n    weight: 1.0\n  - name: \"db\"\n    weight: 0.5\n"));
/// # Ok::<(), Box<dyn std::error::Error>>(())
/// ```
pub fn to_priority_yaml(
    fused: &[Fused],
    method: Method,
    missing: Missing,
    lists: &[SourceList],
) -> String {
    to_priority_yaml_leaving_out(fused, method, missing, lists, &[])
}

/// [`to_priority_yaml`] for a fusion that left out the sources `left_out` (file names, each
/// with why, such as `no row inside --window 2024-01-01..2024-01-31`): the header counts and
/// names them apart from the lists fused, so the file does not claim sources that took no
/// part. Lists in `lists` with no entries count as left out too, since [`fuse`] skips them.
///
/// ```
/// use basefit::plan::fusion::{fuse, to_priority_yaml_leaving_out, Method, Missing, SourceList};
/// let lists = [SourceList::ranked("top.csv", ["web", "db"])?];
/// let fused = fuse(&lists, Method::RankSum, Missing::WorstPlusOne)?;
/// let left_out = [("old.csv".to_string(), "no usable row".to_string())];
/// let yaml = to_priority_yaml_leaving_out(&fused, Method::RankSum, Missing::WorstPlusOne, &lists, &left_out);
/// assert!(yaml.starts_with("# Fused by basefit from 1 source list(s): \"top.csv\"\n# left out of the fusion, 1 source list(s) with no row: \"old.csv\" (no usable row)\n"));
/// # Ok::<(), Box<dyn std::error::Error>>(())
/// ```
pub fn to_priority_yaml_leaving_out(
    fused: &[Fused],
    method: Method,
    missing: Missing,
    lists: &[SourceList],
    left_out: &[(String, String)],
) -> String {
    let mut out = String::new();
    let used: Vec<&SourceList> = lists.iter().filter(|l| !l.is_empty()).collect();
    let mut skipped: Vec<String> = left_out
        .iter()
        .map(|(file, why)| format!("{} ({why})", crate::report::yaml_string(file)))
        .collect();
    skipped.extend(
        lists
            .iter()
            .filter(|l| l.is_empty() && !left_out.iter().any(|(f, _)| *f == l.file))
            .map(|l| format!("{} (no row)", crate::report::yaml_string(&l.file))),
    );
    let sources: Vec<String> = used
        .iter()
        .map(|l| crate::report::yaml_string(&l.file))
        .collect();
    // `write!` into a String cannot fail; the results are ignored for that reason.
    let _ = writeln!(
        out,
        "# Fused by basefit from {} source list(s): {}",
        used.len(),
        sources.join(", ")
    );
    if !skipped.is_empty() {
        // A comment line ends at a line break; yaml_string escapes any in a file name.
        let _ = writeln!(
            out,
            "# left out of the fusion, {} source list(s) with no row: {}",
            skipped.len(),
            skipped.join(", ")
        );
    }
    let _ = writeln!(
        out,
        "# method: {}; missing entries: {}; weight 1.0 is the best package",
        method.label(),
        missing.label()
    );
    if fused.is_empty() {
        out.push_str("priorities: []\n");
        return out;
    }
    out.push_str("priorities:\n");
    for (f, w) in fused.iter().zip(priority_weights(fused, method)) {
        let _ = writeln!(
            out,
            "  - name: {}\n    weight: {}",
            crate::report::yaml_string(&f.name),
            crate::report::yaml_float(w)
        );
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::load::priorities::read_priorities_str;

    fn ranked(file: &str, names: &[&str]) -> SourceList {
        SourceList::ranked(file, names.iter().copied()).unwrap()
    }

    fn order(fused: &[Fused]) -> Vec<&str> {
        fused.iter().map(|f| f.name.as_str()).collect()
    }

    fn score_of(fused: &[Fused], name: &str) -> f64 {
        fused.iter().find(|f| f.name == name).unwrap().score
    }

    /// The Tennessee capital election: 100 voters in four blocs.
    fn tennessee() -> Vec<SourceList> {
        let blocs: [(usize, [&str; 4]); 4] = [
            (42, ["Memphis", "Nashville", "Chattanooga", "Knoxville"]),
            (26, ["Nashville", "Chattanooga", "Knoxville", "Memphis"]),
            (15, ["Chattanooga", "Knoxville", "Nashville", "Memphis"]),
            (17, ["Knoxville", "Chattanooga", "Nashville", "Memphis"]),
        ];
        let mut lists = Vec::new();
        for (voters, ballot) in blocs {
            for v in 0..voters {
                lists.push(ranked(&format!("voter{v}"), &ballot));
            }
        }
        lists
    }

    #[test]
    fn borda_reproduces_tennessee_example() {
        let fused = fuse(&tennessee(), Method::Borda, Missing::WorstPlusOne).unwrap();
        // Source: Wikipedia, "Borda count", section "An Example" (the Tennessee capital
        // election; read via the mirror https://www.liquisearch.com/borda_count/an_example).
        // Four candidates, n - i points (3, 2, 1, 0); 42% Memphis > Nashville > Chattanooga >
        // Knoxville, 26% Nashville > Chattanooga > Knoxville > Memphis, 15% Chattanooga >
        // Knoxville > Nashville > Memphis, 17% Knoxville > Chattanooga > Nashville > Memphis.
        // Published totals: Nashville 194, Chattanooga 173, Memphis 126, Knoxville 107.
        assert_eq!(score_of(&fused, "Nashville"), 194.0);
        assert_eq!(score_of(&fused, "Chattanooga"), 173.0);
        assert_eq!(score_of(&fused, "Memphis"), 126.0);
        assert_eq!(score_of(&fused, "Knoxville"), 107.0);
        assert_eq!(
            order(&fused),
            ["Nashville", "Chattanooga", "Memphis", "Knoxville"]
        );
        // Every ballot ranks every city, so the missing policy cannot matter.
        let excluded = fuse(&tennessee(), Method::Borda, Missing::Exclude).unwrap();
        assert_eq!(excluded, fused);
    }

    #[test]
    fn rank_sum_on_tennessee_is_the_borda_complement() {
        // With full ballots, rank r = n - points, so each rank sum is 100 voters x 4 minus
        // the published Borda total (same Wikipedia example as above): 400 - 194 = 206 for
        // Nashville, 227 Chattanooga, 274 Memphis, 293 Knoxville (arithmetic by hand).
        let fused = fuse(&tennessee(), Method::RankSum, Missing::WorstPlusOne).unwrap();
        assert_eq!(score_of(&fused, "Nashville"), 206.0);
        assert_eq!(score_of(&fused, "Chattanooga"), 227.0);
        assert_eq!(score_of(&fused, "Memphis"), 274.0);
        assert_eq!(score_of(&fused, "Knoxville"), 293.0);
    }

    #[test]
    fn rank_sum_small_example_by_hand() {
        let lists = [
            ranked("l1", &["a", "b", "c"]),
            ranked("l2", &["b", "a"]),
            ranked("l3", &["c", "b", "a", "d"]),
        ];
        let fused = fuse(&lists, Method::RankSum, Missing::WorstPlusOne).unwrap();
        // Computed by hand: absent ranks are len + 1 (4 in l1, 3 in l2).
        // a = 1 + 2 + 3 = 6, b = 2 + 1 + 2 = 5, c = 3 + 3 + 1 = 7, d = 4 + 3 + 4 = 11.
        assert_eq!(order(&fused), ["b", "a", "c", "d"]);
        assert_eq!(
            fused.iter().map(|f| f.score).collect::<Vec<_>>(),
            [5.0, 6.0, 7.0, 11.0]
        );
        assert_eq!(
            fused.iter().map(|f| f.lists_present).collect::<Vec<_>>(),
            [3, 3, 2, 1]
        );
        assert_eq!(
            fused.iter().map(|f| f.rank).collect::<Vec<_>>(),
            [1, 2, 3, 4]
        );
    }

    #[test]
    fn rank_sum_exclude_uses_mean_rank() {
        let lists = [
            ranked("l1", &["a", "b", "c"]),
            ranked("l2", &["b", "a"]),
            ranked("l3", &["c", "b", "a", "d"]),
        ];
        let fused = fuse(&lists, Method::RankSum, Missing::Exclude).unwrap();
        // By hand: a = (1+2+3)/3 = 2, b = (2+1+2)/3 = 5/3, c = (3+1)/2 = 2, d = 4/1 = 4.
        // a and c tie at 2 and are ordered by name.
        assert_eq!(order(&fused), ["b", "a", "c", "d"]);
        assert_eq!(score_of(&fused, "b"), 5.0 / 3.0);
        assert_eq!(score_of(&fused, "a"), 2.0);
        assert_eq!(score_of(&fused, "c"), 2.0);
        assert_eq!(score_of(&fused, "d"), 4.0);
    }

    #[test]
    fn reciprocal_formula_by_hand_fractions() {
        // Exact fractions for the formula of Cormack, Clarke and Buettcher (SIGIR 2009),
        // RRF(d) = sum 1/(k + r(d)), k = 60, computed by hand (the published example above
        // is only given to 32-bit precision):
        //   a: ranks 1, 3 -> 1/61 + 1/63 = 124/3843
        //   b: ranks 2, 1 -> 1/62 + 1/61 = 123/3782
        //   c: ranks 3, 2 -> 1/63 + 1/62 = 125/3906
        // and 123/3782 (0.03252) > 124/3843 (0.03227) > 125/3906 (0.03200).
        let lists = [
            ranked("l1", &["a", "b", "c"]),
            ranked("l2", &["b", "c", "a"]),
        ];
        let fused = fuse(&lists, Method::RECIPROCAL, Missing::Exclude).unwrap();
        assert_eq!(order(&fused), ["b", "a", "c"]);
        let close = |x: f64, y: f64| (x - y).abs() < 1e-15;
        assert!(close(score_of(&fused, "a"), 124.0 / 3843.0));
        assert!(close(score_of(&fused, "b"), 123.0 / 3782.0));
        assert!(close(score_of(&fused, "c"), 125.0 / 3906.0));
    }

    #[test]
    fn reciprocal_reproduces_published_worked_example() {
        // Source: OpenSearch documentation, "Reciprocal rank fusion" (vector search, hybrid
        // search), example "Fusing keyword and vector results" and the table under "Tuning the
        // rank constant" (read from the documentation-website repository,
        // _vector-search/ai-search/hybrid-search/rrf.md). Keyword list: documents 1, 2; vector
        // list: 2, 3, 4; a document absent from a list contributes nothing (our Exclude).
        // Published scores (printed as 32-bit floats, so compared to 1e-7):
        //   rank constant 60: doc 2 0.032522473, doc 1 0.016393442, doc 3 0.016129032,
        //                     doc 4 0.015873017;
        //   rank constant 1:  doc 2 0.8333334, doc 1 0.5, doc 3 0.33333334, doc 4 0.25.
        let lists = [
            ranked("keyword", &["1", "2"]),
            ranked("vector", &["2", "3", "4"]),
        ];
        let published_k60 = [
            ("2", 0.032522473),
            ("1", 0.016393442),
            ("3", 0.016129032),
            ("4", 0.015873017),
        ];
        let published_k1 = [("2", 0.8333334), ("1", 0.5), ("3", 0.33333334), ("4", 0.25)];
        for (method, published) in [
            (Method::RECIPROCAL, published_k60),
            (Method::Reciprocal { k: 1.0 }, published_k1),
        ] {
            let fused = fuse(&lists, method, Missing::Exclude).unwrap();
            assert_eq!(order(&fused), ["2", "1", "3", "4"], "{method:?}");
            for (name, score) in published {
                let ours = score_of(&fused, name);
                assert!((ours - score).abs() < 1e-7, "{method:?} {name}: {ours}");
            }
        }
        // The same page's three-shard variant: keyword 2, 1; vector 2, 3, 4, 1, 5; rank
        // constant 1. Published: doc 2 1.0, doc 1 0.53333336, doc 3 0.33333334, doc 4 0.25,
        // doc 5 0.16666667.
        let lists = [
            ranked("keyword", &["2", "1"]),
            ranked("vector", &["2", "3", "4", "1", "5"]),
        ];
        let fused = fuse(&lists, Method::Reciprocal { k: 1.0 }, Missing::Exclude).unwrap();
        assert_eq!(order(&fused), ["2", "1", "3", "4", "5"]);
        for (name, score) in [
            ("2", 1.0),
            ("1", 0.53333336),
            ("3", 0.33333334),
            ("4", 0.25),
            ("5", 0.16666667),
        ] {
            assert!((score_of(&fused, name) - score).abs() < 1e-7, "{name}");
        }
    }

    #[test]
    fn reciprocal_missing_policies_by_hand() {
        let lists = [ranked("l1", &["a", "b"]), ranked("l2", &["c"])];
        // By hand, k = 60. Exclude: a = 1/61, b = 1/62, c = 1/61.
        let ex = fuse(&lists, Method::RECIPROCAL, Missing::Exclude).unwrap();
        assert_eq!(order(&ex), ["a", "c", "b"]);
        assert_eq!(score_of(&ex, "c"), 1.0 / 61.0);
        // Worst-plus-one: absent from l1 (len 2) is rank 3, from l2 (len 1) rank 2.
        // a = 1/61 + 1/62, b = 1/62 + 1/62, c = 1/63 + 1/61; a = 123/3782 > c = 124/3843
        // > b = 2/62.
        let worst = fuse(&lists, Method::RECIPROCAL, Missing::WorstPlusOne).unwrap();
        assert_eq!(order(&worst), ["a", "c", "b"]);
        assert!((score_of(&worst, "a") - 123.0 / 3782.0).abs() < 1e-15);
        assert!((score_of(&worst, "c") - 124.0 / 3843.0).abs() < 1e-15);
        assert!((score_of(&worst, "b") - 2.0 / 62.0).abs() < 1e-15);
    }

    #[test]
    fn borda_missing_policies_by_hand() {
        // n = 4 names over both lists. By hand:
        // Worst-plus-one: l1 = [a, b, c] gives 3, 2, 1 and absent d 4 - 4 = 0;
        // l2 = [d, a] gives 3, 2 and absent b, c 4 - 3 = 1.
        // a = 5, b = 3, c = 2, d = 3 -> a, b, d, c (b and d tie, by name).
        let lists = [ranked("l1", &["a", "b", "c"]), ranked("l2", &["d", "a"])];
        let worst = fuse(&lists, Method::Borda, Missing::WorstPlusOne).unwrap();
        assert_eq!(order(&worst), ["a", "b", "d", "c"]);
        assert_eq!(score_of(&worst, "b"), 3.0);
        assert_eq!(score_of(&worst, "c"), 2.0);
        // Exclude: absent lists add nothing. a = 5, b = 2, c = 1, d = 3 -> a, d, b, c.
        let ex = fuse(&lists, Method::Borda, Missing::Exclude).unwrap();
        assert_eq!(order(&ex), ["a", "d", "b", "c"]);
        assert_eq!(score_of(&ex, "b"), 2.0);
        // Points are never negative, even for a package missing from every other list.
        assert!(worst.iter().all(|f| f.score >= 0.0));
    }

    #[test]
    fn ties_break_by_name_whatever_the_list_order() {
        let lists = [
            ranked("l1", &["zeta", "alpha"]),
            ranked("l2", &["alpha", "zeta"]),
        ];
        for method in [Method::RankSum, Method::Borda, Method::RECIPROCAL] {
            for missing in [Missing::WorstPlusOne, Missing::Exclude] {
                let fused = fuse(&lists, method, missing).unwrap();
                assert_eq!(order(&fused), ["alpha", "zeta"], "{method:?} {missing:?}");
                let mut reversed = lists.to_vec();
                reversed.reverse();
                assert_eq!(fuse(&reversed, method, missing).unwrap(), fused);
            }
        }
    }

    #[test]
    fn scored_ties_share_the_mean_position() {
        let list =
            SourceList::scored("s", [("b", 5.0), ("a", 5.0), ("c", 1.0), ("d", 9.0)]).unwrap();
        let got: Vec<(&str, f64)> = list
            .entries()
            .iter()
            .map(|e| (e.name.as_str(), e.rank))
            .collect();
        // By hand: d first; a and b share positions 2 and 3, so 2.5 each, listed by name.
        assert_eq!(got, [("d", 1.0), ("a", 2.5), ("b", 2.5), ("c", 4.0)]);
    }

    #[test]
    fn share_sum_by_hand() {
        let lists = [
            SourceList::scored("l1", [("a", 60.0), ("b", 30.0), ("c", 10.0)]).unwrap(),
            SourceList::scored("l2", [("a", 1.0), ("b", 3.0)]).unwrap(),
        ];
        let fused = fuse(&lists, Method::ShareSum, Missing::WorstPlusOne).unwrap();
        // By hand: l1 shares 0.6, 0.3, 0.1; l2 shares 0.25, 0.75.
        // a = 0.85, b = 1.05, c = 0.1.
        assert_eq!(order(&fused), ["b", "a", "c"]);
        assert!((score_of(&fused, "a") - 0.85).abs() < 1e-12);
        assert!((score_of(&fused, "b") - 1.05).abs() < 1e-12);
        assert!((score_of(&fused, "c") - 0.1).abs() < 1e-12);
        let ex = fuse(&lists, Method::ShareSum, Missing::Exclude).unwrap();
        assert_eq!(ex, fused);
    }

    #[test]
    fn share_sum_needs_scores_and_rrf_needs_sane_k() {
        let lists = [ranked("top.csv", &["a"])];
        let err = fuse(&lists, Method::ShareSum, Missing::Exclude).unwrap_err();
        assert_eq!(
            err.to_string(),
            "top.csv: share-sum fusion needs a score for every entry, but the list has no \
             scores; use a rank-based method or give every entry a score"
        );
        // Read from a file, the line where a score is first missing is named.
        let mut ledger = Ledger::default();
        let text = "rank,name,score\n1,a,5\n2,b,\n3,c,\n";
        let lists = [read_source_str("top.csv", text, None, &mut ledger).unwrap()];
        let err = fuse(&lists, Method::ShareSum, Missing::Exclude).unwrap_err();
        assert_eq!(
            err.to_string(),
            "top.csv:3: share-sum fusion needs a score for every entry, but `b` has an empty \
             `score`; use a rank-based method or give every entry a score"
        );
        let lists = [read_source_str("top.csv", "rank,name\n1,a\n", None, &mut ledger).unwrap()];
        let err = fuse(&lists, Method::ShareSum, Missing::Exclude).unwrap_err();
        assert!(
            err.to_string()
                .starts_with("top.csv:1: share-sum fusion needs a score for every entry, but the list has no `score` column;"),
            "{err}"
        );
        for k in [f64::NAN, -1.0, f64::INFINITY] {
            assert!(fuse(&lists, Method::Reciprocal { k }, Missing::Exclude).is_err());
        }
        assert!(
            fuse(&[], Method::Borda, Missing::Exclude)
                .unwrap()
                .is_empty()
        );
    }

    #[test]
    fn csv_ranked_list_with_problems_counted() {
        let text = "name,rank,date\n\
                    web,1,2024-01-03\n\
                    db,x,2024-01-03\n\
                    ,2,2024-01-03\n\
                    log,-3,2024-01-03\n\
                    cli,5,someday\n\
                    web,7,2024-01-03\n\
                    api,3,2024-01-03\n";
        let mut ledger = Ledger::default();
        let list = read_source_str("top.csv", text, None, &mut ledger).unwrap();
        let names: Vec<&str> = list.entries().iter().map(|e| e.name.as_str()).collect();
        // Rank values are an order only: 1, 3, 5 become positions 1, 2, 3.
        assert_eq!(names, ["web", "api", "cli"]);
        assert_eq!(list.entries()[2].rank, 3.0);
        let tally = &ledger.tallies[&RecordKind::SourceEntry];
        assert_eq!((tally.read, tally.used, tally.left_out), (7, 3, 4));
        assert!(ledger.unbalanced().is_empty());
        let seen: Vec<(String, ProblemKind, bool)> = ledger
            .problems
            .iter()
            .map(|p| (p.origin.to_string(), p.kind, p.left_out))
            .collect();
        assert_eq!(
            seen,
            [
                ("top.csv:3".to_string(), ProblemKind::BadValue, true),
                ("top.csv:4".to_string(), ProblemKind::BadValue, true),
                ("top.csv:5".to_string(), ProblemKind::BadValue, true),
                ("top.csv:6".to_string(), ProblemKind::UnreadableDate, false),
                ("top.csv:7".to_string(), ProblemKind::DuplicateEntry, true),
            ]
        );
        assert_eq!(
            ledger.problems[0].detail,
            "`rank`: expected a number, found `x`"
        );
        assert_eq!(ledger.problems[2].detail, "`rank` -3 is negative");
    }

    #[test]
    fn csv_name_ranked_twice_keeps_its_better_row() {
        let text = "name,rank\n\
                    web,5\n\
                    api,2\n\
                    web,1\n\
                    api,2\n\
                    cli,3\n";
        let mut ledger = Ledger::default();
        let list = read_source_str("top.csv", text, None, &mut ledger).unwrap();
        let names: Vec<&str> = list.entries().iter().map(|e| e.name.as_str()).collect();
        // web's rank 1 (line 4) beats its rank 5 (line 2); api's tie keeps line 3.
        assert_eq!(names, ["web", "api", "cli"]);
        let tally = &ledger.tallies[&RecordKind::SourceEntry];
        assert_eq!((tally.read, tally.used, tally.left_out), (5, 3, 2));
        assert!(ledger.unbalanced().is_empty());
        ledger.sort();
        let seen: Vec<(String, &str)> = ledger
            .problems
            .iter()
            .map(|p| (p.origin.to_string(), p.detail.as_str()))
            .collect();
        assert_eq!(
            seen,
            [
                ("top.csv:2".to_string(), "ranked better at line 4"),
                ("top.csv:5".to_string(), "ranked better or equal at line 3"),
            ]
        );
    }

    #[test]
    fn a_replaced_row_without_a_score_is_not_the_one_named() {
        // web's row at line 2 has no score, but its better row at line 4 replaces it.
        let text = "name,rank,score\nweb,5,\napi,2,3\nweb,1,4\n";
        let mut ledger = Ledger::default();
        let list = read_source_str("top.csv", text, None, &mut ledger).unwrap();
        assert_eq!(list.unscored, None);
        let text = "name,rank,score\nweb,5,\napi,2,\nweb,1,4\n";
        let list = read_source_str("top.csv", text, None, &mut ledger).unwrap();
        assert_eq!(list.unscored.map(|u| u.line), Some(Some(3)));
    }

    #[test]
    fn csv_scored_rows_summed_within_window() {
        let text = "name,score,date\n\
                    web,10,2024-03-01\n\
                    web,5,2024-03-02\n\
                    db,7,2024-03-02\n\
                    web,100,2024-02-28\n\
                    db,1,\n\
                    db,2,2024-13-01\n\
                    cli,-1,2024-03-02\n\
                    cli,4,2024-03-31\n";
        let window = Window {
            from: ReleaseDate::parse("2024-03-01").unwrap(),
            to: ReleaseDate::parse("2024-03-31").unwrap(),
        };
        let mut ledger = Ledger::default();
        let list = read_source_str("dl.csv", text, Some(window), &mut ledger).unwrap();
        let got: Vec<(&str, Option<f64>, f64)> = list
            .entries()
            .iter()
            .map(|e| (e.name.as_str(), e.score, e.rank))
            .collect();
        // web 10 + 5 (the February row is outside), db 7, cli 4.
        assert_eq!(
            got,
            [
                ("web", Some(15.0), 1.0),
                ("db", Some(7.0), 2.0),
                ("cli", Some(4.0), 3.0)
            ]
        );
        let tally = &ledger.tallies[&RecordKind::SourceEntry];
        assert_eq!((tally.read, tally.used, tally.left_out), (8, 4, 4));
        let kinds: Vec<(usize, ProblemKind)> = ledger
            .problems
            .iter()
            .map(|p| (p.origin.line, p.kind))
            .collect();
        assert_eq!(
            kinds,
            [
                (5, ProblemKind::OutsideWindow),
                (6, ProblemKind::BadValue),
                (7, ProblemKind::BadValue),
                (8, ProblemKind::BadValue),
            ]
        );
        assert!(ledger.problems.iter().all(|p| p.left_out));
        // Without a window every dated row counts; the unreadable date is only noted.
        let mut ledger = Ledger::default();
        let all = read_source_str("dl.csv", text, None, &mut ledger).unwrap();
        assert_eq!(all.entries()[0].score, Some(115.0));
        assert_eq!(all.entries()[1].score, Some(10.0));
    }

    #[test]
    fn csv_header_errors() {
        let mut ledger = Ledger::default();
        // The suggestion comes from the shared table reader's closest-name hint.
        let err = read_source_str("s.csv", "name,scores\na,1\n", None, &mut ledger).unwrap_err();
        assert_eq!(
            err.to_string(),
            "s.csv:1: unknown column `scores`; did you mean `score`?"
        );
        let err = read_source_str("s.csv", "rank,score\n1,2\n", None, &mut ledger).unwrap_err();
        assert_eq!(err.to_string(), "s.csv:1: missing required column `name`");
        let err =
            read_source_str("s.csv", "name,date\na,2024-01-01\n", None, &mut ledger).unwrap_err();
        assert_eq!(
            err.to_string(),
            "s.csv:1: a source list needs a `rank` or a `score` column; found neither"
        );
        let window = Window {
            from: ReleaseDate(20240101),
            to: ReleaseDate(20240131),
        };
        let err =
            read_source_str("s.csv", "name,score\na,1\n", Some(window), &mut ledger).unwrap_err();
        assert_eq!(
            err.to_string(),
            "s.csv:1: a time window (2024-01-01 to 2024-01-31) was given but the file has no \
             `date` column"
        );
        let err = read_source_str("s.csv", "name,score\n", None, &mut ledger).unwrap_err();
        assert_eq!(err.to_string(), "s.csv:1: no entries after the header");
        // A row with the wrong number of fields makes the file unusable, naming its line,
        // and the rows counted before it are not left in the ledger.
        let err =
            read_source_str("s.csv", "name,score\na,1\nb,2,3\n", None, &mut ledger).unwrap_err();
        assert_eq!(err.file, "s.csv");
        assert_eq!(err.line, Some(3));
        assert!(ledger.tallies.is_empty() && ledger.problems.is_empty());
    }

    #[test]
    fn csv_bad_score_names_file_and_line() {
        let mut ledger = Ledger::default();
        let text = "name,score\na,1\nb,NaN\nc,1e999\nd,\n";
        let list = read_source_str("dl.csv", text, None, &mut ledger).unwrap();
        assert_eq!(list.len(), 1);
        let lines: Vec<String> = ledger
            .problems
            .iter()
            .map(|p| p.origin.to_string())
            .collect();
        assert_eq!(lines, ["dl.csv:3", "dl.csv:4", "dl.csv:5"]);
        assert_eq!(
            ledger.problems[0].detail,
            "`score`: expected a number, found `NaN`"
        );
        assert_eq!(ledger.problems[2].detail, "`score` is empty");
    }

    #[test]
    fn csv_file_on_disk() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("dl.csv");
        std::fs::write(&path, "name,score\nweb,3\ndb,9\n").unwrap();
        let mut ledger = Ledger::default();
        let list = read_source_csv(&path, &mut ledger).unwrap();
        assert_eq!(list.entries()[0].name, "db");
        assert_eq!(list.file(), path.display().to_string());
        let missing = dir.path().join("nope.csv");
        assert!(read_source_csv(&missing, &mut ledger).is_err());
    }

    #[test]
    fn yaml_round_trips_odd_names_through_the_priority_reader() {
        let odd = [
            "plain",
            "null",
            "true",
            "1.5",
            "- dash",
            "a: b",
            "#hash",
            "quote\"d",
            "back\\slash",
            "tab\there",
            "new\nline",
            "nel\u{85}x",
            "ls\u{2028}x",
            "bell\u{7}",
            "del\u{7f}",
            "\u{feff}bom",
            " padded ",
            "ünï 🎉",
            "'single'",
            "&anchor *alias !tag",
        ];
        let lists = [SourceList::ranked("we\"ird\nfile.csv", odd.iter().copied()).unwrap()];
        let fused = fuse(&lists, Method::Borda, Missing::WorstPlusOne).unwrap();
        let yaml = to_priority_yaml(&fused, Method::Borda, Missing::WorstPlusOne, &lists);
        let mut ledger = Ledger::default();
        let back = read_priorities_str("fused.yaml", &yaml, &mut ledger).unwrap();
        let names: Vec<&str> = back.entries.iter().map(|e| e.name.as_str()).collect();
        // The priority readers trim names (CSV source lists never hold padded ones), so only
        // ` padded ` comes back other than written; names that hold white space or control
        // characters come back as problems, not entries (`load::diag::name_problem`).
        let trimmed: Vec<&str> = order(&fused).into_iter().map(str::trim).collect();
        let (kept, refused): (Vec<&str>, Vec<&str>) = trimmed
            .iter()
            .partition(|n| crate::load::diag::name_problem(n).is_none());
        assert_eq!(names, kept);
        let weights: Vec<f64> = back.entries.iter().map(|e| e.weight).collect();
        let all = priority_weights(&fused, Method::Borda);
        let kept_weights: Vec<f64> = trimmed
            .iter()
            .zip(all)
            .filter(|(n, _)| crate::load::diag::name_problem(n).is_none())
            .map(|(_, w)| w)
            .collect();
        assert_eq!(weights, kept_weights);
        assert_eq!(
            ledger.problems.len(),
            refused.len(),
            "{:?}",
            ledger.problems
        );
        assert!(
            ledger
                .problems
                .iter()
                .all(|p| p.kind == crate::load::diag::ProblemKind::BadValue),
            "{:?}",
            ledger.problems
        );
        // Same input, same bytes.
        assert_eq!(
            to_priority_yaml(&fused, Method::Borda, Missing::WorstPlusOne, &lists),
            yaml
        );
    }

    /// A list with no entries says nothing about any name: fused with it, every method gives
    /// the same scores as without it, absent ranks included.
    #[test]
    fn an_empty_list_takes_no_part() {
        let a = ranked("a", &["x", "y", "z"]);
        let empty = SourceList::ranked("e", Vec::<&str>::new()).unwrap();
        for method in [
            Method::RankSum,
            Method::Borda,
            Method::Reciprocal { k: 60.0 },
        ] {
            for missing in [Missing::WorstPlusOne, Missing::Exclude] {
                let alone = fuse(std::slice::from_ref(&a), method, missing).unwrap();
                let with = fuse(&[a.clone(), empty.clone()], method, missing).unwrap();
                assert_eq!(with, alone, "{method:?} {missing:?}");
            }
        }
    }

    #[test]
    fn weights_per_method() {
        let lists = [ranked("l1", &["a", "b", "c", "d"])];
        let rs = fuse(&lists, Method::RankSum, Missing::WorstPlusOne).unwrap();
        // By hand: totals 1, 2, 3, 4 -> best / total.
        assert_eq!(
            priority_weights(&rs, Method::RankSum),
            [1.0, 0.5, 1.0 / 3.0, 0.25]
        );
        let bo = fuse(&lists, Method::Borda, Missing::WorstPlusOne).unwrap();
        // Points 3, 2, 1, 0 -> points / 3.
        assert_eq!(
            priority_weights(&bo, Method::Borda),
            [1.0, 2.0 / 3.0, 1.0 / 3.0, 0.0]
        );
        let zero = [SourceList::scored("z", [("a", 0.0), ("b", 0.0)]).unwrap()];
        let sh = fuse(&zero, Method::ShareSum, Missing::Exclude).unwrap();
        assert_eq!(priority_weights(&sh, Method::ShareSum), [1.0, 1.0]);
        assert!(priority_weights(&[], Method::Borda).is_empty());
        let empty = to_priority_yaml(&[], Method::Borda, Missing::Exclude, &[]);
        assert!(empty.ends_with("priorities: []\n"));
    }

    #[test]
    fn constructors_reject_bad_input_without_panicking() {
        assert!(SourceList::ranked("f", [""]).is_err());
        assert!(SourceList::scored("f", [("a", f64::NAN)]).is_err());
        assert!(SourceList::scored("f", [("a", -1.0)]).is_err());
        assert!(SourceList::scored("f", [("a", f64::MAX), ("a", f64::MAX)]).is_err());
        let big = SourceList::scored("f", [("a", f64::MAX), ("b", f64::MAX)]).unwrap();
        let fused = fuse(&[big], Method::ShareSum, Missing::Exclude).unwrap();
        assert_eq!(fused[0].score, 0.5);
        assert_eq!(fused[1].score, 0.5);
    }

    /// "-0" and "0" are the same rank (`number` adds zero so they tie): they share the mean
    /// position and are listed by name, as the entries' doc says ties are. Mutation review:
    /// without the `+ 0.0`, `-0` sorted before `0` and `b` was listed first.
    #[test]
    fn a_rank_of_minus_zero_ties_with_zero() {
        let mut ledger = Ledger::default();
        let list = read_source_str("top.csv", "name,rank\nb,-0\na,0\n", None, &mut ledger).unwrap();
        let got: Vec<(&str, f64)> = list
            .entries()
            .iter()
            .map(|e| (e.name.as_str(), e.rank))
            .collect();
        assert_eq!(got, [("a", 1.5), ("b", 1.5)]);
        assert!(ledger.problems.is_empty());
    }

    /// A scored list whose scores are all zero measured nothing: under share-sum it gives
    /// every entry a share of 0 and leaves the other lists' shares as they are. Mutation
    /// review: dividing by its zero maximum made every share of that list NaN, and the
    /// names on it sorted first with weight NaN.
    #[test]
    fn an_all_zero_list_adds_nothing_to_share_sum() {
        let lists = [
            SourceList::scored("zero", [("z", 0.0), ("y", 0.0)]).unwrap(),
            SourceList::scored("dl", [("a", 3.0), ("z", 1.0)]).unwrap(),
        ];
        let fused = fuse(&lists, Method::ShareSum, Missing::WorstPlusOne).unwrap();
        // By hand: dl shares 0.75 and 0.25; zero adds 0 to z and y.
        assert_eq!(order(&fused), ["a", "z", "y"]);
        assert_eq!(
            fused.iter().map(|f| f.score).collect::<Vec<_>>(),
            [0.75, 0.25, 0.0]
        );
        assert_eq!(
            priority_weights(&fused, Method::ShareSum),
            [1.0, 1.0 / 3.0, 0.0]
        );
    }

    /// Rows of a scored CSV whose sum would overflow are left out at their line, as
    /// `SourceList::scored` refuses them. Mutation review: without the check the sum became
    /// infinite and share-sum's shares NaN.
    #[test]
    fn csv_summed_score_overflow_leaves_the_row_out() {
        let mut ledger = Ledger::default();
        let text = "name,score\na,1e308\na,1e308\nb,1\n";
        let list = read_source_str("dl.csv", text, None, &mut ledger).unwrap();
        assert_eq!(list.entries()[0].score, Some(1e308));
        let tally = &ledger.tallies[&RecordKind::SourceEntry];
        assert_eq!((tally.read, tally.used, tally.left_out), (3, 2, 1));
        let seen: Vec<(String, ProblemKind, &str)> = ledger
            .problems
            .iter()
            .map(|p| (p.origin.to_string(), p.kind, p.detail.as_str()))
            .collect();
        assert_eq!(
            seen,
            [(
                "dl.csv:3".to_string(),
                ProblemKind::BadValue,
                "summed score exceeds the largest representable number"
            )]
        );
    }

    /// `fuse`'s doc: scores do not depend on the order of the lists, to the bit. Mutation
    /// review: summing each package's terms in list order instead of smallest first gave
    /// x = 1/61 + 1/61 + 1/62 one way and a different last bit the other (found by trying
    /// small ranks).
    #[test]
    fn scores_are_the_same_bits_whatever_the_list_order() {
        let lists = [
            ranked("l1", &["x", "y"]),
            ranked("l2", &["x", "y"]),
            ranked("l3", &["y", "x"]),
        ];
        let fused = fuse(&lists, Method::RECIPROCAL, Missing::WorstPlusOne).unwrap();
        let mut reversed = lists.to_vec();
        reversed.reverse();
        let back = fuse(&reversed, Method::RECIPROCAL, Missing::WorstPlusOne).unwrap();
        for (a, b) in fused.iter().zip(&back) {
            assert_eq!(a.score.to_bits(), b.score.to_bits(), "{}", a.name);
        }
    }

    /// The reciprocal constant may be 0 ("a finite number of at least 0", as the error
    /// says): every rank r then earns 1/r. Mutation review: `k > 0` went unnoticed.
    #[test]
    fn a_reciprocal_constant_of_zero_is_allowed() {
        let lists = [ranked("l1", &["a", "b", "c", "d"])];
        let fused = fuse(&lists, Method::Reciprocal { k: 0.0 }, Missing::Exclude).unwrap();
        assert_eq!(
            fused.iter().map(|f| f.score).collect::<Vec<_>>(),
            [1.0, 0.5, 1.0 / 3.0, 0.25]
        );
    }

    /// Small weights are written as YAML 1.1 floats, with a point and a signed exponent
    /// (YAML 1.1 type repository, float: `[-+]?([0-9][0-9_]*)?\.[0-9.]*([eE][-+][0-9]+)?`),
    /// as the rest of basefit's YAML is: `1e-7`, as written before, is a string to a YAML
    /// 1.1 reader such as PyYAML (`yaml.safe_load("w: 1e-7")` gives `{'w': '1e-7'}`, checked
    /// on the machine).
    #[test]
    fn small_weights_are_yaml_1_1_floats() {
        let lists = [SourceList::scored("dl", [("a", 1e7), ("b", 1.0)]).unwrap()];
        let fused = fuse(&lists, Method::ShareSum, Missing::WorstPlusOne).unwrap();
        let weights = priority_weights(&fused, Method::ShareSum);
        assert_eq!(weights, [1.0, 1e-7]);
        let yaml = to_priority_yaml(&fused, Method::ShareSum, Missing::WorstPlusOne, &lists);
        assert!(
            yaml.ends_with(
                "  - name: \"a\"\n    weight: 1.0\n  - name: \"b\"\n    weight: 1.0e-7\n"
            ),
            "{yaml}"
        );
        let mut ledger = Ledger::default();
        let back = read_priorities_str("fused.yaml", &yaml, &mut ledger).unwrap();
        assert_eq!(back.entries[1].weight, 1e-7);
    }
}

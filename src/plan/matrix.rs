//! The predicted matrix: every priority entry solved on every image, in parallel.

use crate::load::Inputs;
use crate::model::{Image, PackageId, Priority};
use crate::native::{self, Confidence};
use crate::solve::{self, BuildKind, Cause, ImageView, Observed, RootSpec, Solved};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// The prediction for one cell.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Outcome {
    /// Resolves, and nothing native is missing.
    Installs,
    /// Resolves, but a likely or possible native need is not met by the image.
    AtRisk,
    Fails,
    /// The solver budget ran out.
    Undecided,
}

impl Outcome {
    pub const ALL: [Outcome; 4] = [
        Outcome::Installs,
        Outcome::AtRisk,
        Outcome::Fails,
        Outcome::Undecided,
    ];

    pub fn as_str(self) -> &'static str {
        match self {
            Outcome::Installs => "installs",
            Outcome::AtRisk => "at-risk",
            Outcome::Fails => "fails",
            Outcome::Undecided => "undecided",
        }
    }

    pub fn parse(s: &str) -> Option<Outcome> {
        Outcome::ALL.into_iter().find(|o| o.as_str() == s)
    }

    /// Whether the package resolves (cleanly or at risk).
    pub fn resolves(self) -> bool {
        matches!(self, Outcome::Installs | Outcome::AtRisk)
    }
}

/// One package of a resolved closure.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Pinned {
    pub name: String,
    pub version: String,
    pub build: BuildKind,
}

/// A native need of a cell, for output.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct NeedRow {
    pub library: Option<String>,
    pub confidence: Confidence,
    pub via: String,
    /// How the release that needs it is built: from source (the development package and a
    /// toolchain) or prebuilt (the runtime package). Absent in matrices written before it was
    /// recorded.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub build: Option<BuildKind>,
    pub evidence: Vec<String>,
}

/// One (package, image) prediction.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Cell {
    pub package: String,
    pub image: String,
    pub outcome: Outcome,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cause: Option<Cause>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub root_version: Option<String>,
    pub closure_size: usize,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub closure: Vec<Pinned>,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub explanation: Vec<String>,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub native_needs: Vec<NeedRow>,
    /// System packages the image would have to add for this cell.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub missing_system_packages: Vec<String>,
    /// On an image with a C compiler only: how sure it is that a source build of the closure
    /// compiles C++ (its C++ compiler package is then among `missing_system_packages`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cxx_missing: Option<crate::native::Confidence>,
    /// Packages whose state makes this cell fail, with a short reason.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub blockers: Vec<BlockerRow>,
    /// Recorded install results for this cell, set by `verify` when results are given.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub recorded: Option<RecordedCheck>,
    /// What the solve observed of the registry, for re-planning; not part of the rendered
    /// output.
    #[serde(skip)]
    pub observed: Observed,
}

impl Cell {
    /// A cell with `outcome` and nothing else known yet.
    pub fn new(package: &str, image: &str, outcome: Outcome) -> Cell {
        Cell {
            package: package.into(),
            image: image.into(),
            outcome,
            cause: None,
            root_version: None,
            closure_size: 0,
            closure: Vec::new(),
            explanation: Vec::new(),
            native_needs: Vec::new(),
            missing_system_packages: Vec::new(),
            cxx_missing: None,
            blockers: Vec::new(),
            recorded: None,
            observed: Observed::default(),
        }
    }
}

/// How recorded installs of one cell compare with its prediction.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct RecordedCheck {
    /// `installed`, `failed` or `flaky` (retries disagree).
    pub recorded: String,
    /// How it compares, e.g. `agreed-install`, `surprise-failure`, `drift`.
    pub verdict: String,
    /// Installed version, when the record gives one.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub version: Option<String>,
    /// One line on the probable cause or the difference.
    pub detail: String,
    /// Number of recorded attempts.
    pub attempts: usize,
    /// For a predicted failure that failed: whether the log's cause matches the predicted
    /// one. A failure for another cause is no agreement: the fix the prediction points at
    /// would not make the package install.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cause_agrees: Option<bool>,
}

#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct BlockerRow {
    pub package: String,
    pub reason: String,
}

/// An image as the matrix shows it.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct ImageColumn {
    pub id: String,
    pub runtime: String,
    pub family: String,
    pub platform: String,
    /// It can compile C (see [`Image::toolchain`]).
    pub toolchain: bool,
    /// It can compile C++ too (see [`Image::cxx`]). Absent in matrices written before the
    /// field existed, which are then not checked for it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cxx: Option<bool>,
    /// The system packages the image declares, sorted: native outcomes were judged against
    /// them, so `review --matrix` can tell an images file edited since the plan. Absent in
    /// matrices written before the field existed, which are then not checked for it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub packages: Option<Vec<String>>,
}

impl ImageColumn {
    /// The column a matrix records for `image`.
    pub fn of(image: &Image) -> ImageColumn {
        ImageColumn {
            id: image.id.clone(),
            runtime: image.runtime.to_string(),
            family: image.family.to_string(),
            platform: image.platform.to_string(),
            toolchain: image.toolchain,
            cxx: Some(image.cxx),
            packages: Some(image.system_packages.iter().cloned().collect()),
        }
    }

    /// What `image` declares differently from this recorded column, one `field: X here, Y in
    /// the matrix` part per field; empty when it is the image the column was planned from, as
    /// far as a column records it.
    ///
    /// ```
    /// use basefit::plan::matrix::ImageColumn;
    /// let planned = ImageColumn {
    ///     id: "deb-2.4".into(),
    ///     runtime: "2.4.9".into(),
    ///     family: "debian".into(),
    ///     platform: "linux/glibc/x86_64".into(),
    ///     toolchain: true,
    ///     cxx: Some(true),
    ///     packages: Some(vec!["libpq5".into()]),
    /// };
    /// let now = ImageColumn { runtime: "2.6.0".into(), ..planned.clone() };
    /// assert_eq!(planned.differences(&now), ["runtime 2.6.0 here, 2.4.9 in the matrix"]);
    /// assert!(planned.differences(&planned).is_empty());
    /// // Build metadata does not count in precedence (Semantic Versioning 2.0.0, section 10).
    /// let rebuilt = ImageColumn { runtime: "2.4.9+deb1".into(), ..planned.clone() };
    /// assert!(planned.differences(&rebuilt).is_empty());
    /// let more = ImageColumn { packages: Some(vec!["libpq-dev".into(), "libpq5".into()]), ..planned.clone() };
    /// assert_eq!(planned.differences(&more), ["system packages: libpq-dev added here"]);
    /// let swapped = ImageColumn { packages: Some(vec!["libpq-dev".into()]), ..planned.clone() };
    /// assert_eq!(
    ///     planned.differences(&swapped),
    ///     ["system packages: libpq-dev added here, libpq5 removed here"]
    /// );
    /// let c_only = ImageColumn { cxx: Some(false), ..planned.clone() };
    /// assert_eq!(planned.differences(&c_only), ["C++ compiler false here, true in the matrix"]);
    /// // A matrix from before the field planned every toolchain as compiling C++ too.
    /// let older = ImageColumn { cxx: None, ..planned.clone() };
    /// assert_eq!(older.differences(&c_only).len(), 1);
    /// assert!(older.differences(&planned).is_empty());
    /// ```
    pub fn differences(&self, image: &ImageColumn) -> Vec<String> {
        let mut out = Vec::new();
        // Runtimes of one precedence admit the same releases: those plan alike.
        let same_precedence = semver::Version::parse(&image.runtime)
            .ok()
            .zip(semver::Version::parse(&self.runtime).ok())
            .is_some_and(|(a, b)| a.cmp_precedence(&b).is_eq());
        if !same_precedence && image.runtime != self.runtime {
            out.push(format!(
                "runtime {} here, {} in the matrix",
                image.runtime, self.runtime
            ));
        }
        for (field, here, planned) in [
            ("family", &image.family, &self.family),
            ("platform", &image.platform, &self.platform),
        ] {
            if here != planned {
                out.push(format!("{field} {here} here, {planned} in the matrix"));
            }
        }
        if image.toolchain != self.toolchain {
            out.push(format!(
                "toolchain {} here, {} in the matrix",
                image.toolchain, self.toolchain
            ));
        }
        match (image.cxx, self.cxx) {
            (Some(here), Some(planned)) if here != planned => {
                out.push(format!("C++ compiler {here} here, {planned} in the matrix"));
            }
            // A matrix written before basefit told C from C++ planned every image with a
            // toolchain as compiling both.
            (Some(false), None) if image.toolchain && self.toolchain => out.push(
                "a C compiler only here; the matrix, written before basefit told C from C++, planned it with a C++ compiler too".to_string(),
            ),
            _ => {}
        }
        if let (Some(here), Some(planned)) = (&image.packages, &self.packages) {
            let not_in = |list: &[String], other: &[String]| -> Vec<String> {
                list.iter()
                    .filter(|p| !other.contains(p))
                    .cloned()
                    .collect()
            };
            let (added, removed) = (not_in(here, planned), not_in(planned, here));
            let mut parts = Vec::new();
            if !added.is_empty() {
                parts.push(format!("{} added here", added.join(" ")));
            }
            if !removed.is_empty() {
                parts.push(format!("{} removed here", removed.join(" ")));
            }
            if !parts.is_empty() {
                out.push(format!("system packages: {}", parts.join(", ")));
            }
        }
        out
    }
}

/// A priority entry as the matrix shows it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PackageRow {
    pub rank: usize,
    pub name: String,
    #[serde(deserialize_with = "unsigned_zero")]
    pub weight: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub summary: Option<String>,
}

/// A weight read back as `-0` is zero, as a priority list's is: every document that carries
/// the weight would print the sign.
fn unsigned_zero<'de, D: serde::Deserializer<'de>>(d: D) -> Result<f64, D::Error> {
    f64::deserialize(d).map(|w| w + 0.0)
}

/// Printed with every matrix: predictions are not install results.
pub const NOTICE: &str = "Predicted from declared metadata only: confirm with real installs before shipping an \
image. Installing untrusted packages runs their code, so record installs in sandboxed CI.";

/// Printed with a matrix planned with `--no-native` ([`Matrix::native_skipped`]), whose ✓ would
/// otherwise read as a promise about system libraries it never looked at.
pub const NATIVE_SKIPPED_NOTICE: &str = "Planned with --no-native, so native needs were not checked: \
an installs verdict means only that the version requirements resolve; a system library or C \
toolchain the image lacks is not caught.";

/// The notice a rendering carries: [`NOTICE`], followed by [`NATIVE_SKIPPED_NOTICE`] when
/// native needs were not checked.
///
/// ```
/// use basefit::plan::matrix::{NOTICE, notice};
/// assert_eq!(notice(false), NOTICE);
/// assert!(notice(true).ends_with("is not caught."));
/// ```
pub fn notice(native_skipped: bool) -> String {
    if native_skipped {
        format!("{NOTICE} {NATIVE_SKIPPED_NOTICE}")
    } else {
        NOTICE.to_string()
    }
}

/// The predicted support matrix: rows in priority order, columns in declared image order,
/// cells row by row. Unknown fields are refused: a matrix may be edited by hand, and a
/// misspelt field would otherwise be dropped without a word.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Matrix {
    pub notice: String,
    /// Planned with `--no-native`: outcomes come from version solving alone, so a system
    /// library or toolchain the image lacks was not looked for. Absent in matrices written
    /// before the field existed, which were all planned with native checks.
    #[serde(default)]
    pub native_skipped: bool,
    pub images: Vec<ImageColumn>,
    pub packages: Vec<PackageRow>,
    pub cells: Vec<Cell>,
    /// Set on a shard's partial matrix; merge the shards to get the whole one.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub shard: Option<super::replan::Shard>,
    /// On a shard: a fingerprint of everything its cells were planned from (registry, images,
    /// priorities, catalog, options, basefit version), so that only shards of one plan merge.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub planned_from: Option<String>,
    /// A fingerprint of the registry snapshot the matrix was planned from (every package's
    /// releases, requirements, builds, flags and native hints; not the order of the files),
    /// written by the `plan`, `merge` and `render` commands: `review` and `render` given the
    /// matrix and recorded results refuse another registry, whose releases would be read
    /// against predictions it did not make. Absent in matrices written before it, which are
    /// not checked.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub registry_fingerprint: Option<String>,
    /// A fingerprint of the system-library catalog the matrix was planned with (the shipped
    /// one with any `--catalog` file applied), written with `registry_fingerprint`: `review`
    /// and `render` given the matrix and recorded results refuse another catalog, which would
    /// read logs and advise by other libraries than the predictions were made with. Absent in
    /// matrices written before it, which are not checked.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub catalog_fingerprint: Option<String>,
}

impl Matrix {
    /// The cell of `package` on `image`. A whole matrix holds it at its position; a shard's
    /// holds only some cells, so there it is looked up by name (by position it was another
    /// cell, found by a test of a partial matrix).
    pub fn cell(&self, package: &str, image: &str) -> Option<&Cell> {
        let row = self.packages.iter().position(|p| p.name == package)?;
        let col = self.images.iter().position(|i| i.id == image)?;
        match self.cells.get(row * self.images.len() + col) {
            Some(c) if c.package == package && c.image == image => Some(c),
            _ => self
                .cells
                .iter()
                .find(|c| c.package == package && c.image == image),
        }
    }

    /// The cells of row `index` of a whole matrix ([`Matrix::check_layout`]); empty where the
    /// matrix does not hold the whole row at its place (a shard's, or one with cells missing,
    /// where the place may hold another row's cells).
    pub fn row(&self, index: usize) -> &[Cell] {
        let n = self.images.len();
        let Some(package) = self.packages.get(index) else {
            return &[];
        };
        let cells = self
            .cells
            .get(index.saturating_mul(n)..index.saturating_add(1).saturating_mul(n))
            .unwrap_or(&[]);
        match cells.iter().all(|c| c.package == package.name) {
            true => cells,
            false => &[],
        }
    }

    /// Whether this is a whole matrix laid out as `plan` writes it: one cell per package row
    /// and image column, row by row, each naming its row's package and its column's image,
    /// and no image or package twice ([`Matrix::check_names`]). Readers index cells by position, so a file that breaks this would
    /// be rendered or compared wrongly rather than refused. Each row's weight must be a finite
    /// number of at least 0, as a priority list's are: YAML can spell infinities and
    /// not-a-number, which a JSON rendering of the matrix would write as `null`, and no
    /// reader takes that back.
    ///
    /// ```
    /// use basefit::plan::Matrix;
    /// let mut m = Matrix {
    ///     notice: String::new(),
    ///     native_skipped: false,
    ///     images: Vec::new(),
    ///     packages: Vec::new(),
    ///     cells: Vec::new(),
    ///     shard: None,
    ///     planned_from: None,
    ///     registry_fingerprint: None,
    ///     catalog_fingerprint: None,
    /// };
    /// assert!(m.check_layout().is_ok());
    /// m.packages.push(basefit::plan::matrix::PackageRow {
    ///     rank: 1,
    ///     name: "quokka".into(),
    ///     weight: 1.0,
    ///     summary: None,
    /// });
    /// m.images.push(basefit::plan::matrix::ImageColumn {
    ///     id: "deb-3.2".into(),
    ///     runtime: "3.2.0".into(),
    ///     family: "debian".into(),
    ///     platform: "linux/glibc/x86_64".into(),
    ///     toolchain: true,
    ///     cxx: None,
    ///     packages: None,
    /// });
    /// // One row and one column, but no cell for them.
    /// assert!(m.check_layout().unwrap_err().contains("0 cells for 1 package rows"));
    /// ```
    pub fn check_layout(&self) -> Result<(), String> {
        let n = self.images.len();
        if self.cells.len() != self.packages.len() * n {
            return Err(format!(
                "not a complete matrix: {} cells for {} package rows x {} images (merge shards first)",
                self.cells.len(),
                self.packages.len(),
                n
            ));
        }
        self.check_rows()?;
        self.check_cells()?;
        for (i, cell) in self.cells.iter().enumerate() {
            let (package, image) = (&self.packages[i / n].name, &self.images[i % n].id);
            if cell.package != *package || cell.image != *image {
                return Err(format!(
                    "the {} cell is {} on {} where {package} on {image} belongs (cells must follow the rows and columns)",
                    crate::report::ordinal(i + 1),
                    cell.package,
                    cell.image
                ));
            }
        }
        Ok(())
    }

    /// Whether every cell reads as `plan` writes cells: each version it names (`root_version`,
    /// and each closure package's) is a semver version, and its outcome agrees with the rest of
    /// it (the rules are `contradiction`'s). A review compares installed versions with them,
    /// so a hand-edited `banana` would be reported as a drift to `banana`; and a matrix file
    /// carries no seal, so a hand edit that makes a cell contradict itself (`fails` beside a
    /// closure and no cause) would be merged, rendered and diffed as a prediction.
    pub fn check_cells(&self) -> Result<(), String> {
        for (i, cell) in self.cells.iter().enumerate() {
            let at = || {
                format!(
                    "the {} cell ({} on {})",
                    crate::report::ordinal(i + 1),
                    cell.package,
                    cell.image
                )
            };
            if let Some(why) = contradiction(cell) {
                return Err(format!("{}: {why}", at()));
            }
            let root = cell.root_version.iter().map(|v| ("root_version", "", v));
            let closure = cell
                .closure
                .iter()
                .map(|p| ("the closure's version of ", p.name.as_str(), &p.version));
            for (what, name, version) in root.chain(closure) {
                if let Err(e) = semver::Version::parse(version) {
                    return Err(format!(
                        "{}: {what}{name} `{version}` is not a semver version ({e})",
                        at()
                    ));
                }
            }
        }
        Ok(())
    }

    /// What [`Matrix::check_layout`] asks of the rows and columns alone, which shards of one
    /// plan share: finite weights of at least 0 and no package or image twice
    /// ([`Matrix::check_names`]).
    pub fn check_rows(&self) -> Result<(), String> {
        if let Some((i, row)) = self
            .packages
            .iter()
            .enumerate()
            .find(|(_, p)| !(p.weight.is_finite() && p.weight >= 0.0))
        {
            return Err(format!(
                "the {} package row ({}): weight {} is not a finite number of at least 0",
                crate::report::ordinal(i + 1),
                row.name,
                row.weight
            ));
        }
        // As the priority list's loader demands: no share of an infinite total means anything.
        if !self
            .packages
            .iter()
            .map(|p| p.weight)
            .sum::<f64>()
            .is_finite()
        {
            return Err("the package rows' weights add up to more than a number can hold".into());
        }
        self.check_names()
    }

    /// Whether every package has one row and every image one column. Cells are looked up by
    /// name, so a second row or column of one name would be shown but never compared: `diff`
    /// would call a matrix with an extra copy of a row equal to the one without it.
    pub fn check_names(&self) -> Result<(), String> {
        let mut ids: Vec<&str> = self.images.iter().map(|i| i.id.as_str()).collect();
        ids.sort_unstable();
        if let Some(w) = ids.windows(2).find(|w| w[0] == w[1]) {
            return Err(format!("image `{}` has two columns", w[0]));
        }
        let mut names: Vec<&str> = self.packages.iter().map(|p| p.name.as_str()).collect();
        names.sort_unstable();
        if let Some(w) = names.windows(2).find(|w| w[0] == w[1]) {
            return Err(format!("package `{}` has two rows", w[0]));
        }
        Ok(())
    }
}

/// Options of a plan run.
#[derive(Debug, Clone)]
pub struct PlanOptions {
    /// Solver steps per cell before the cell is undecided.
    pub budget: u64,
    /// Apply the native-library step.
    pub native: bool,
    /// Keep the full closure of each cell in the output.
    pub closures: bool,
    /// Advanced once per planned cell; the command layer shows it on a terminal only.
    pub progress: Option<indicatif::ProgressBar>,
}

impl Default for PlanOptions {
    fn default() -> Self {
        PlanOptions {
            budget: solve::DEFAULT_BUDGET,
            native: true,
            closures: true,
            progress: None,
        }
    }
}

/// Solves `entry` on the image of `view` and applies the native step: one cell.
pub fn plan_cell(
    inputs: &Inputs,
    view: &ImageView<'_>,
    entry: &Priority,
    options: &PlanOptions,
) -> Cell {
    let spec = RootSpec {
        package: &entry.name,
        req: entry.req.as_ref(),
        prerelease: entry.prerelease,
    };
    let solved = solve::solve_cell(view, &spec, options.budget);
    let mut cell = cell_from_solve(inputs, view, entry, solved, options);
    // The solver knows the entry's requirement only as the releases it admits; a reader
    // looking at "no release the entry may take" needs the requirement as written.
    if let Some(req) = entry.req.as_ref().map(|r| r.text.trim())
        && !req.is_empty()
        && req != "*"
    {
        let asks = format!("the entry asks for {} (", entry.name);
        if let Some(line) = cell.explanation.iter_mut().find(|l| l.starts_with(&asks)) {
            *line = format!(
                "the entry asks for {} {req} ({}",
                entry.name,
                &line[asks.len()..]
            );
        }
    }
    cell
}

/// Like [`plan_cell`] with the root pinned to exactly the release at `index` of `root`
/// (the entry's package): no requirement string can pin one release, since matching ignores
/// build metadata and `=1.1.0` with pre-releases admitted also takes `1.1.0-rc.1`.
pub fn plan_pinned_cell(
    inputs: &Inputs,
    view: &ImageView<'_>,
    entry: &Priority,
    root: PackageId,
    index: u32,
    options: &PlanOptions,
) -> Cell {
    let solved = solve::solve_with_root_set(
        view,
        root,
        solve::IndexSet::singleton(index),
        options.budget,
    );
    cell_from_solve(inputs, view, entry, solved, options)
}

/// The cell for a solve of `entry`, native step applied.
fn cell_from_solve(
    inputs: &Inputs,
    view: &ImageView<'_>,
    entry: &Priority,
    solved: solve::CellSolve,
    options: &PlanOptions,
) -> Cell {
    let registry = &inputs.registry;
    let image = view.image;
    let mut cell = Cell::new(&entry.name, &image.id, Outcome::Fails);
    cell.observed = solved.observed;
    match solved.solved {
        Solved::Installs {
            root_index,
            closure,
        } => {
            let root = registry
                .id(&entry.name)
                .expect("an installed root is in the registry");
            cell.outcome = Outcome::Installs;
            cell.root_version = Some(
                registry.package(root).releases[root_index as usize]
                    .version
                    .to_string(),
            );
            cell.closure_size = closure.len();
            if options.native {
                apply_native(inputs, image, &closure, &mut cell);
            }
            if options.closures {
                cell.closure = closure
                    .iter()
                    .map(|p| Pinned {
                        name: registry.name(p.package).to_string(),
                        version: registry.package(p.package).releases[p.index as usize]
                            .version
                            .to_string(),
                        build: p.build,
                    })
                    .collect();
            }
        }
        Solved::Fails(failure) => {
            cell.cause = Some(failure.cause);
            cell.explanation = failure.lines;
            cell.blockers = failure
                .blockers
                .into_iter()
                .map(|b| BlockerRow {
                    package: registry.name(b.package).to_string(),
                    reason: b.reason,
                })
                .collect();
        }
        Solved::Undecided { steps } => {
            cell.outcome = Outcome::Undecided;
            cell.cause = Some(Cause::BudgetExhausted);
            cell.explanation = vec![format!(
                "the solver gave up after {steps} steps; raise --budget to decide this cell"
            )];
        }
    }
    cell
}

fn apply_native(inputs: &Inputs, image: &Image, closure: &[solve::Pin], cell: &mut Cell) {
    let a = native::assess(&inputs.registry, &inputs.catalog, image, closure);
    cell.native_needs = a
        .needs
        .iter()
        .map(|n| NeedRow {
            library: n.library.clone(),
            confidence: n.confidence,
            via: n.via.clone(),
            build: Some(n.build),
            evidence: n.evidence.clone(),
        })
        .collect();
    cell.missing_system_packages = a.packages_to_add();
    cell.cxx_missing = a.cxx_missing;
    let certain_missing = a.missing.iter().any(|(_, c)| *c == Confidence::Certain);
    // Beside a failure whose packages can be named, a library that has none: adding the
    // named packages alone would not make the cell install.
    let unmapped = match a.unknown_libraries.is_empty() {
        true => String::new(),
        false => format!(
            "; it also needs libraries the catalog has no package for on this image: {}",
            a.unknown_libraries.join(", ")
        ),
    };
    // Which closure package needs the C++ compiler, and why: "needs g++" alone leaves the
    // reader to search the closure for it.
    let cxx_because = match a.cxx_because.as_slice() {
        [] => String::new(),
        [(_, one)] => one.clone(),
        [(_, first), rest @ ..] => format!("{first}; and {} more", rest.len()),
    };
    // What a certain toolchain failure lacks: any compiler, or on a C-only image the C++ one.
    let lacks = match (a.toolchain_missing, a.cxx_missing) {
        (Some(Confidence::Certain), _) => Some((
            "a declared native library must be compiled".to_string(),
            "has no C toolchain",
        )),
        (_, Some(Confidence::Certain)) => Some((
            format!("a build in the closure compiles C++ ({cxx_because})"),
            "has a C compiler but no C++ compiler",
        )),
        _ => None,
    };
    if let Some((what, has)) = lacks {
        cell.outcome = Outcome::Fails;
        cell.cause = Some(Cause::MissingToolchain);
        cell.explanation.push(format!(
            "{what}, and {} {has}{}{unmapped}",
            image.id,
            add_list(&cell.missing_system_packages)
        ));
    } else if certain_missing {
        cell.outcome = Outcome::Fails;
        cell.cause = Some(Cause::MissingSystemLibrary);
        let certain: Vec<&str> = a
            .missing
            .iter()
            .filter(|(_, c)| *c == Confidence::Certain)
            .map(|(p, _)| p.as_str())
            .collect();
        cell.explanation.push(format!(
            "a declared native library is missing on {}; add: {}{unmapped}",
            image.id,
            certain.join(" ")
        ));
    } else if a.worst_missing().is_some() || !a.unknown_libraries.is_empty() {
        cell.outcome = Outcome::AtRisk;
        let mut why = Vec::new();
        if let Some(worst) = a.worst_missing() {
            // "probably" for likely needs and "may" for possible ones, as the native needs
            // and `cxx_missing` grade them: one word for both read a guess as a finding.
            let graded = |c: Confidence| -> Vec<&str> {
                a.missing
                    .iter()
                    .filter(|(_, mc)| *mc == c)
                    .map(|(p, _)| p.as_str())
                    .collect()
            };
            let (likely, possible) = (graded(Confidence::Likely), graded(Confidence::Possible));
            if !likely.is_empty() {
                why.push(format!("probably needs: {}", likely.join(" ")));
            }
            if !possible.is_empty() {
                why.push(format!("may need: {}", possible.join(" ")));
            }
            if a.missing.is_empty() {
                why.push(match worst {
                    Confidence::Possible => "may need a C toolchain".to_string(),
                    _ => "probably needs a C toolchain".to_string(),
                });
            }
            if a.cxx_missing.is_some() {
                why.push(format!("the C++ compiler for {cxx_because}"));
            }
        }
        if !a.unknown_libraries.is_empty() {
            why.push(format!(
                "needs libraries the catalog has no package for on this image: {}",
                a.unknown_libraries.join(", ")
            ));
        }
        cell.explanation.push(why.join("; "));
    }
}

/// "; add: ..." naming the packages to add, or nothing when there are none to name: an empty
/// list after "add:" reads as a truncated message.
fn add_list(packages: &[String]) -> String {
    if packages.is_empty() {
        String::new()
    } else {
        format!("; add: {}", packages.join(" "))
    }
}

/// Plans every priority entry on every image. Cells are solved in parallel on the current
/// rayon pool; the result does not depend on the number of threads.
pub fn plan(inputs: &Inputs, options: &PlanOptions) -> Matrix {
    super::replan::plan_uncached(inputs, options, None).0.matrix
}

/// An image's solver context, built only when some cell needs it: a re-plan that finds
/// nothing changed, or a plan of a few cells, builds few.
pub(crate) struct LazyView<'r> {
    pub(crate) registry: &'r crate::model::Registry,
    image: &'r Image,
    sets: &'r solve::SetCache,
    view: std::sync::OnceLock<ImageView<'r>>,
}

impl<'r> LazyView<'r> {
    /// One lazy view per image, in order.
    pub(crate) fn per_image(
        registry: &'r crate::model::Registry,
        images: &'r [Image],
        sets: &'r solve::SetCache,
    ) -> Vec<LazyView<'r>> {
        images
            .iter()
            .map(|image| LazyView {
                registry,
                image,
                sets,
                view: std::sync::OnceLock::new(),
            })
            .collect()
    }

    pub(crate) fn get(&self) -> &ImageView<'r> {
        self.view
            .get_or_init(|| ImageView::new(self.registry, self.image, self.sets))
    }
}

/// The explanation of a cell [`plan_only`] did not solve.
pub const NOT_PLANNED: &str = "not planned: only the cells asked for were solved";

/// Plans only the cells `wanted` names, by index (`row * images + column`, the order of
/// [`Matrix::cells`]); the others are undecided, explained by [`NOT_PLANNED`]. For a caller
/// that reads a few cells of a large product, such as a review of recorded results: planning
/// every entry on every image would solve and hold cells nobody reads. Solved cells drop the
/// record a re-plan cache keeps, which no reader of this matrix needs.
///
/// ```
/// use basefit::plan::{PlanOptions, matrix::{plan_only, NOT_PLANNED}};
/// let inputs = basefit::load::Inputs::default();
/// let m = plan_only(&inputs, &PlanOptions::default(), &Default::default());
/// assert!(m.cells.is_empty());
/// ```
pub fn plan_only(
    inputs: &Inputs,
    options: &PlanOptions,
    wanted: &std::collections::BTreeSet<usize>,
) -> Matrix {
    use rayon::prelude::*;
    let images = &inputs.images.images;
    let sets = solve::SetCache::default();
    let views = LazyView::per_image(&inputs.registry, images, &sets);
    if let Some(pb) = &options.progress {
        crate::load::start_bar(
            pb,
            wanted.len() as u64,
            "{pos}/{len} cells with recorded results, {rate}, eta {eta} {wide_bar}",
        );
    }
    let total = inputs.priorities.entries.len() * images.len();
    let cells: Vec<Cell> = (0..total)
        .into_par_iter()
        .map(|i| {
            let entry = &inputs.priorities.entries[i / images.len()];
            let image = &images[i % images.len()];
            if !wanted.contains(&i) {
                let mut cell = Cell::new(&entry.name, &image.id, Outcome::Undecided);
                cell.explanation = vec![NOT_PLANNED.to_string()];
                return cell;
            }
            if let Some(pb) = &options.progress {
                pb.inc(1);
            }
            let mut cell = plan_cell(inputs, views[i % images.len()].get(), entry, options);
            cell.observed = Observed::default();
            cell
        })
        .collect();
    if let Some(pb) = &options.progress {
        pb.finish_and_clear();
    }
    Matrix {
        notice: notice(!options.native),
        native_skipped: !options.native,
        images: image_columns(inputs),
        packages: package_rows(inputs),
        cells,
        shard: None,
        planned_from: None,
        registry_fingerprint: None,
        catalog_fingerprint: None,
    }
}

pub fn image_columns(inputs: &Inputs) -> Vec<ImageColumn> {
    inputs.images.images.iter().map(ImageColumn::of).collect()
}

pub fn package_rows(inputs: &Inputs) -> Vec<PackageRow> {
    inputs
        .priorities
        .entries
        .iter()
        .map(|e| PackageRow {
            rank: e.rank,
            name: e.name.clone(),
            weight: e.weight,
            summary: inputs.registry.id(&e.name).and_then(|id| {
                inputs
                    .registry
                    .package(id)
                    .summary
                    .as_deref()
                    .map(str::to_owned)
            }),
        })
        .collect()
}

/// Counts per image and per package.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Summary {
    /// The matrix was planned with `--no-native` ([`Matrix::native_skipped`]).
    pub native_skipped: bool,
    pub images: Vec<ImageCounts>,
    pub packages: Vec<PackageCounts>,
    pub causes: BTreeMap<String, usize>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ImageCounts {
    pub image: String,
    pub installs: usize,
    pub at_risk: usize,
    pub fails: usize,
    pub undecided: usize,
    /// Share of the priority weight that resolves (cleanly or at risk); `None` (JSON `null`)
    /// when every weight is zero.
    pub weight_share: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PackageCounts {
    pub package: String,
    pub installs_on: usize,
    pub at_risk_on: usize,
    pub images: usize,
}

/// `part` as a share of the priority weight `part + rest`, or `None` when that is zero (every
/// weight zero, which a list may declare): a share of nothing is undefined, and printing it
/// as 0% would say that nothing resolves. Every share of priority weight is divided here.
///
/// Weight on both sides gives a share strictly between 0 and 1 even where the division
/// rounds to an end (a weight of 1 failing beside 1e17 resolving): 100% would read as an
/// image on which everything installs.
///
/// ```
/// use basefit::plan::matrix::weight_share;
/// assert_eq!(weight_share(3.0, 1.0), Some(0.75));
/// assert!(weight_share(1e17, 1.0).unwrap() < 1.0);
/// assert!(weight_share(1.0, 1e300).unwrap() > 0.0);
/// assert_eq!(weight_share(0.0, 0.0), None);
/// ```
pub fn weight_share(part: f64, rest: f64) -> Option<f64> {
    let total = part + rest;
    (total > 0.0).then(|| {
        let share = part / total;
        if rest > 0.0 && share >= 1.0 {
            1.0f64.next_down()
        } else if part > 0.0 && share <= 0.0 {
            f64::MIN_POSITIVE
        } else {
            share
        }
    })
}

/// Summarises a full matrix.
pub fn summarise(m: &Matrix) -> Summary {
    let n = m.images.len();
    let mut resolving = vec![0.0; n];
    let mut not_resolving = vec![0.0; n];
    let mut images: Vec<ImageCounts> = m
        .images
        .iter()
        .map(|i| ImageCounts {
            image: i.id.clone(),
            installs: 0,
            at_risk: 0,
            fails: 0,
            undecided: 0,
            weight_share: None,
        })
        .collect();
    let mut packages = Vec::new();
    let mut causes: BTreeMap<String, usize> = BTreeMap::new();
    for (r, row) in m.packages.iter().enumerate() {
        let mut pc = PackageCounts {
            package: row.name.clone(),
            installs_on: 0,
            at_risk_on: 0,
            images: n,
        };
        for (c, cell) in m.row(r).iter().enumerate() {
            let ic = &mut images[c];
            match cell.outcome {
                Outcome::Installs => {
                    ic.installs += 1;
                    pc.installs_on += 1;
                }
                Outcome::AtRisk => {
                    ic.at_risk += 1;
                    pc.at_risk_on += 1;
                }
                Outcome::Fails => ic.fails += 1,
                Outcome::Undecided => ic.undecided += 1,
            }
            if cell.outcome.resolves() {
                resolving[c] += row.weight;
            } else {
                not_resolving[c] += row.weight;
            }
            if let Some(cause) = cell.cause {
                *causes.entry(cause.as_str().to_string()).or_default() += 1;
            }
        }
        packages.push(pc);
    }
    for ((ic, part), rest) in images.iter_mut().zip(resolving).zip(not_resolving) {
        ic.weight_share = weight_share(part, rest);
    }
    Summary {
        native_skipped: m.native_skipped,
        images,
        packages,
        causes,
    }
}

/// How a cell's outcome disagrees with the rest of it, as no cell `plan` writes does: a cell
/// that resolves names its release, a closure of at least one package and no failure cause; a
/// failure names its cause and explains it; `budget-exhausted` is the cause of undecided cells
/// and of no other (an undecided cell `plan_only` left unplanned has none); a native failure
/// resolved first, so it names its release; a listed closure has the size the cell gives; and
/// only a cell that resolves, or then fails on what the image lacks, names a release.
fn contradiction(cell: &Cell) -> Option<String> {
    let native_failure = matches!(
        cell.cause,
        Some(Cause::MissingSystemLibrary | Cause::MissingToolchain)
    );
    let may_name_a_release =
        cell.outcome.resolves() || (cell.outcome == Outcome::Fails && native_failure);
    let outcome = cell.outcome.as_str();
    if cell.outcome.resolves() && cell.root_version.is_none() {
        Some(format!("`{outcome}` names no root_version"))
    } else if cell.outcome.resolves() && cell.closure_size == 0 {
        Some(format!(
            "`{outcome}` with a closure_size of 0 (the closure holds the package itself)"
        ))
    } else if cell.outcome.resolves() && cell.cause.is_some() {
        Some(format!("`{outcome}` names a failure cause"))
    } else if cell.outcome == Outcome::Fails && cell.cause.is_none() {
        Some("`fails` names no cause".to_string())
    } else if cell.cause == Some(Cause::BudgetExhausted) && cell.outcome != Outcome::Undecided {
        Some(format!(
            "`{outcome}` with the cause budget-exhausted, which only an undecided cell has"
        ))
    } else if let Some(cause) = cell.cause.filter(|c| *c != Cause::BudgetExhausted)
        && cell.outcome == Outcome::Undecided
    {
        Some(format!(
            "`undecided` with the cause {}: the cause of an undecided cell is budget-exhausted",
            cause.as_str()
        ))
    } else if cell.outcome == Outcome::Fails && cell.explanation.is_empty() {
        Some("`fails` gives no explanation".to_string())
    } else if native_failure && cell.root_version.is_none() {
        Some(format!(
            "`fails` ({}) names no root_version, though only a cell that resolved fails on what the image lacks",
            cell.cause.map_or("", |c| c.as_str())
        ))
    } else if !cell.closure.is_empty() && cell.closure.len() != cell.closure_size {
        Some(format!(
            "a closure of {} packages with a closure_size of {}",
            cell.closure.len(),
            cell.closure_size
        ))
    } else if (cell.root_version.is_some() || !cell.closure.is_empty()) && !may_name_a_release {
        Some(format!(
            "`{outcome}`{} names a release it installs, as only a cell that resolves does (or one that then fails on what the image lacks)",
            cell.cause
                .map(|c| format!(" ({})", c.as_str()))
                .unwrap_or_default()
        ))
    } else {
        None
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn column(id: &str) -> ImageColumn {
        ImageColumn {
            id: id.into(),
            runtime: "3.1.0".into(),
            family: "debian".into(),
            platform: "linux/glibc/x86_64".into(),
            toolchain: true,
            cxx: Some(true),
            packages: Some(Vec::new()),
        }
    }

    /// A weight too small to leave a quotient beside a huge one still resolves something:
    /// its share must not print as 0%, which reads as nothing resolving.
    #[test]
    fn a_share_that_underflows_stays_above_zero() {
        assert_eq!(weight_share(1e-300, 1e300), Some(f64::MIN_POSITIVE));
    }

    /// An images file that drops the toolchain plans native needs differently, so a
    /// `--matrix` planned with one must be refused against it.
    #[test]
    fn differences_name_a_toolchain_taken_away() {
        let planned = column("deb");
        let now = ImageColumn {
            toolchain: false,
            ..planned.clone()
        };
        assert_eq!(
            planned.differences(&now),
            ["toolchain false here, true in the matrix"]
        );
    }

    /// Per package, at-risk cells are counted apart from clean installs; per image, they
    /// resolve and so carry their weight into the share; every cause is counted, the
    /// undecided cells' budget-exhausted too.
    #[test]
    fn summary_counts_at_risk_apart_and_as_resolving() {
        let cell = |package: &str, image: &str, outcome: Outcome, cause: Option<Cause>| Cell {
            cause,
            ..Cell::new(package, image, outcome)
        };
        let row = |rank: usize, name: &str, weight: f64| PackageRow {
            rank,
            name: name.into(),
            weight,
            summary: None,
        };
        let m = Matrix {
            notice: NOTICE.into(),
            native_skipped: false,
            images: vec![column("a"), column("b")],
            packages: vec![row(1, "quokka", 3.0), row(2, "numbat", 1.0)],
            cells: vec![
                cell("quokka", "a", Outcome::Installs, None),
                cell("quokka", "b", Outcome::AtRisk, None),
                cell("numbat", "a", Outcome::Fails, Some(Cause::MissingToolchain)),
                cell(
                    "numbat",
                    "b",
                    Outcome::Undecided,
                    Some(Cause::BudgetExhausted),
                ),
            ],
            shard: None,
            planned_from: None,
            registry_fingerprint: None,
            catalog_fingerprint: None,
        };
        let s = summarise(&m);
        let quokka = &s.packages[0];
        assert_eq!(
            (quokka.installs_on, quokka.at_risk_on, quokka.images),
            (1, 1, 2)
        );
        let shares: Vec<Option<f64>> = s.images.iter().map(|i| i.weight_share).collect();
        assert_eq!(shares, [Some(0.75), Some(0.75)]);
        let counts: Vec<[usize; 4]> = s
            .images
            .iter()
            .map(|i| [i.installs, i.at_risk, i.fails, i.undecided])
            .collect();
        assert_eq!(counts, [[1, 0, 1, 0], [0, 1, 0, 1]]);
        assert_eq!(
            s.causes,
            BTreeMap::from([
                (Cause::BudgetExhausted.as_str().to_string(), 1),
                (Cause::MissingToolchain.as_str().to_string(), 1),
            ])
        );
    }
}

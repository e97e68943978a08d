//! System packages per image: who needs what, what each image lacks and what adding it
//! would unblock, built from a planned matrix.

use super::cover::{AdviceStep, Blocked, advise};
use super::matrix::{Matrix, Outcome};
use crate::load::Inputs;
use crate::model::OsFamily;
use crate::native::{self, Confidence, Evidence};
use crate::solve::BuildKind;
use serde::Serialize;
use std::collections::{BTreeMap, BTreeSet};

/// The native evidence of one priority entry's chosen release.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PackageEvidence {
    pub package: String,
    /// The release the evidence is for: the newest one chosen on any image.
    pub version: String,
    /// Strongest confidence over the package itself and its closure.
    pub confidence: Option<Confidence>,
    pub own: Vec<Evidence>,
    /// Needs that come through other packages of the closure: (library, confidence, via).
    pub through: Vec<(Option<String>, Confidence, String)>,
}

/// One missing system package on one image.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MissingPackage {
    pub package: String,
    /// The strongest evidence, over the cells that lack it, of a need that asks for this
    /// package: a source build's need asks for the development package and the toolchain, a
    /// prebuilt one's for the runtime package.
    pub strongest: Confidence,
    /// Entries whose cell lists it as missing, beyond-advice ones included.
    pub needed_by: Vec<String>,
    /// Priority weight of the cells that lack it and that additions can unblock: the cells the
    /// advice counts. A cell lacking several packages counts toward each of them.
    pub weight: f64,
    /// The entries of `needed_by` whose cell is beyond advice (see
    /// [`ImageNeeds::beyond_advice`]): they need this package too, but adding it does not make
    /// them install, so their weight is in `weight_beyond_advice`, not in `weight`.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub beyond_advice: Vec<String>,
    /// Priority weight of the `beyond_advice` cells, kept apart so that `weight` promises
    /// nothing the advice cannot gain.
    pub weight_beyond_advice: f64,
}

/// One step of an image's advice, naming the priority packages it lets install.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AdviceLine {
    #[serde(flatten)]
    pub step: AdviceStep,
    /// The priority packages whose cells this step unblocks, in priority order.
    pub unblocks: Vec<String>,
}

/// A library some priority cell on an image needs that the catalog names no system package
/// for on the image's family (or knows not at all): nothing can be advised for it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct UnmappedLibrary {
    /// The catalog id, or the name as declared when the catalog does not know it.
    pub library: String,
    /// The strongest need of it over the cells that have one.
    pub strongest: Confidence,
    /// The priority packages whose cell needs it, in priority order.
    pub needed_by: Vec<String>,
}

/// What one image lacks for the priority cells that need system packages, and the advice.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ImageNeeds {
    pub image: String,
    pub family: OsFamily,
    pub missing: Vec<MissingPackage>,
    /// Greedy advice: packages in the order that unblocks the most weight per package added.
    /// Only cells that adding packages can unblock count toward its gains.
    pub advice: Vec<AdviceLine>,
    /// Priority packages whose cell here needs a library the catalog has no system package for
    /// on this family, and either lacks system packages with a `likely` or `certain` need of it
    /// or lacks none: they stay at risk whatever the advice adds, so no step's gain and no
    /// package's `weight` counts them.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub beyond_advice: Vec<String>,
    /// Priority packages counted in the advice whose cell also has a `possible` need (a name
    /// or summary mention, nothing stronger) of a library the catalog has no system package
    /// for on this family: the advice adds what their other needs name, and the mention
    /// stays unconfirmed, so they may still be at risk after every addition.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub at_risk_after_advice: Vec<String>,
    /// Priority packages whose cell here the solver gave up on: what they lack is unknown,
    /// so "nothing missing" would claim more than was found.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub undecided: Vec<String>,
    /// The libraries behind `beyond_advice` and `at_risk_after_advice`: needed, but mapped to
    /// no system package of this family, so what the image lacks for them is unknown.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub unmapped_libraries: Vec<UnmappedLibrary>,
    pub command: Option<String>,
}

impl ImageNeeds {
    /// Whether the report finds anything wrong with the image: a package to add, or a needed
    /// library it cannot map to one (which no addition is known to fix).
    pub fn lacks_anything(&self) -> bool {
        !self.missing.is_empty() || !self.unmapped_libraries.is_empty()
    }
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FamilyCommand {
    pub family: OsFamily,
    pub packages: Vec<String>,
    pub command: String,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SystemReport {
    /// The Debian release the catalog's debian package names were checked against: library
    /// package names carry sonames, which change between releases, so a reader on another
    /// release should check them.
    pub debian_release: String,
    pub packages: Vec<PackageEvidence>,
    pub images: Vec<ImageNeeds>,
    pub families: Vec<FamilyCommand>,
}

/// Builds the report from a planned `matrix` of `inputs`.
pub fn system_report(inputs: &Inputs, matrix: &Matrix) -> SystemReport {
    let registry = &inputs.registry;
    let n = matrix.images.len();
    let mut packages = Vec::new();
    for (r, row) in matrix.packages.iter().enumerate() {
        let cells = matrix.row(r);
        // The newest version chosen anywhere stands for the package.
        let chosen = cells
            .iter()
            .filter_map(|c| {
                c.root_version
                    .as_ref()
                    .and_then(|v| semver::Version::parse(v).ok())
                    .map(|v| (v, c))
            })
            .max_by(|a, b| a.0.cmp(&b.0));
        let Some((version, cell)) = chosen else {
            continue;
        };
        let Some(id) = registry.id(&row.name) else {
            continue;
        };
        let Some(index) = registry.find_release(id, &version) else {
            continue;
        };
        let own = native::release_evidence(registry, &inputs.catalog, id, index);
        let through: Vec<(Option<String>, Confidence, String)> = cell
            .native_needs
            .iter()
            .filter(|nd| nd.via != row.name)
            .map(|nd| (nd.library.clone(), nd.confidence, nd.via.clone()))
            .collect();
        let confidence = own
            .iter()
            .map(|e| e.confidence)
            .chain(through.iter().map(|t| t.1))
            .max();
        if confidence.is_none() {
            continue;
        }
        packages.push(PackageEvidence {
            package: row.name.clone(),
            version: version.to_string(),
            confidence,
            own,
            through,
        });
    }
    let mut images = Vec::new();
    let mut by_family: BTreeMap<OsFamily, BTreeSet<String>> = BTreeMap::new();
    for (col, image) in inputs.images.images.iter().enumerate() {
        let mut missing: BTreeMap<String, MissingPackage> = BTreeMap::new();
        let mut blocked = Vec::new();
        let mut beyond_advice = Vec::new();
        let mut at_risk_after_advice = Vec::new();
        let mut undecided = Vec::new();
        let mut unmapped: BTreeMap<String, UnmappedLibrary> = BTreeMap::new();
        // Beside `blocked`: the priority package of each of its items.
        let mut blocked_names: Vec<String> = Vec::new();
        for (r, row) in matrix.packages.iter().enumerate() {
            let cell = &matrix.cells[r * n + col];
            if cell.outcome == Outcome::Undecided {
                undecided.push(row.name.clone());
                continue;
            }
            if !matches!(cell.outcome, Outcome::Fails | Outcome::AtRisk) {
                continue;
            }
            let cell_strongest = cell
                .native_needs
                .iter()
                .map(|nd| nd.confidence)
                .max()
                .unwrap_or(Confidence::Possible);
            // How sure the cell is that it needs package `p`: its strongest need that asks for
            // `p`. A source build asks for the library's development package and a toolchain, a
            // prebuilt one for its runtime package only (a need whose build a matrix does not
            // record asks for any of them). The cell's strongest need of any library would
            // mark a package wanted only on a name's say-so as certain when another need is.
            // A package no need asks for (a catalog given since the matrix was planned)
            // keeps the cell's strongest.
            let toolchain = native::toolchain_packages(image.family);
            let strongest_for = |p: &str| {
                // The C++ compiler a C-only image lacks is as sure as the C++ sources seen.
                if let Some(c) = cell.cxx_missing
                    && p == native::cxx_compiler_package(image.family)
                {
                    return c;
                }
                cell.native_needs
                    .iter()
                    .filter(|nd| {
                        let source = nd.build != Some(BuildKind::Prebuilt);
                        let prebuilt = nd.build != Some(BuildKind::Source);
                        if toolchain.contains(&p) {
                            return source;
                        }
                        nd.library
                            .as_deref()
                            .and_then(|id| inputs.catalog.get(id))
                            .and_then(|l| l.families.get(&image.family))
                            .is_some_and(|f| {
                                (source && f.dev.as_deref() == Some(p))
                                    || (prebuilt && f.runtime.iter().any(|r| r == p))
                            })
                    })
                    .map(|nd| nd.confidence)
                    .max()
                    .unwrap_or(cell_strongest)
            };
            let unknown_needs: Vec<(&str, Confidence)> = cell
                .native_needs
                .iter()
                .filter_map(|nd| {
                    let id = nd.library.as_deref()?;
                    (!inputs.catalog.knows(id, image.family, nd.build))
                        .then_some((id, nd.confidence))
                })
                .collect();
            for &(id, confidence) in &unknown_needs {
                let u = unmapped
                    .entry(id.to_string())
                    .or_insert_with(|| UnmappedLibrary {
                        library: id.to_string(),
                        strongest: confidence,
                        needed_by: Vec::new(),
                    });
                u.strongest = u.strongest.max(confidence);
                if !u.needed_by.contains(&row.name) {
                    u.needed_by.push(row.name.clone());
                }
            }
            let unknown = unknown_needs.iter().map(|&(_, c)| c).max();
            // A `possible` need rests on one word of a name or summary, the weakest evidence
            // there is, and the advice already counts cells whose only missing packages come
            // from such words. Letting an unnameable `possible` need veto the cell would drop
            // its whole weight from the advice even when the additions meet every declared or
            // shipped need it has. So only a `likely` or `certain` unknown need (declared in
            // the metadata, or a shipped header or pkg-config file of the library) puts a cell
            // beyond advice; a `possible` one leaves it counted, and listed as still at risk
            // after the additions, since the mention may be real.
            let beyond = unknown.is_some_and(|c| c >= Confidence::Likely);
            // A cell at risk only for a library the catalog cannot name lacks no package, yet
            // no addition helps it either: it belongs with the cells beyond advice, not out of
            // the report.
            if cell.missing_system_packages.is_empty() {
                // Even a `possible` need then: the advice counts nothing for such a cell.
                if unknown.is_some() {
                    beyond_advice.push(row.name.clone());
                }
                continue;
            }
            for p in &cell.missing_system_packages {
                let strongest = strongest_for(p);
                let m = missing.entry(p.clone()).or_insert_with(|| MissingPackage {
                    package: p.clone(),
                    strongest,
                    needed_by: Vec::new(),
                    weight: 0.0,
                    beyond_advice: Vec::new(),
                    weight_beyond_advice: 0.0,
                });
                m.strongest = m.strongest.max(strongest);
                m.needed_by.push(row.name.clone());
                if beyond {
                    m.beyond_advice.push(row.name.clone());
                    m.weight_beyond_advice += row.weight;
                } else {
                    m.weight += row.weight;
                }
            }
            if beyond {
                beyond_advice.push(row.name.clone());
                continue;
            }
            if unknown.is_some() {
                at_risk_after_advice.push(row.name.clone());
            }
            blocked_names.push(row.name.clone());
            blocked.push(Blocked {
                weight: row.weight,
                missing: cell.missing_system_packages.iter().cloned().collect(),
            });
        }
        let mut missing: Vec<MissingPackage> = missing.into_values().collect();
        missing.sort_by(|a, b| {
            b.weight
                .total_cmp(&a.weight)
                .then(b.weight_beyond_advice.total_cmp(&a.weight_beyond_advice))
                .then(a.package.cmp(&b.package))
        });
        let names: Vec<String> = missing.iter().map(|m| m.package.clone()).collect();
        by_family
            .entry(image.family)
            .or_default()
            .extend(names.iter().cloned());
        images.push(ImageNeeds {
            image: image.id.clone(),
            family: image.family,
            advice: advise(&blocked)
                .into_iter()
                .map(|step| AdviceLine {
                    unblocks: step
                        .unblocked
                        .iter()
                        .map(|&i| blocked_names[i].clone())
                        .collect(),
                    step,
                })
                .collect(),
            beyond_advice,
            at_risk_after_advice,
            undecided,
            unmapped_libraries: unmapped.into_values().collect(),
            command: (!names.is_empty()).then(|| native::install_command(image.family, &names)),
            missing,
        });
    }
    let families = by_family
        .into_iter()
        .filter(|(_, p)| !p.is_empty())
        .map(|(family, p)| {
            let packages: Vec<String> = p.into_iter().collect();
            FamilyCommand {
                family,
                command: native::install_command(family, &packages),
                packages,
            }
        })
        .collect();
    SystemReport {
        debian_release: inputs.catalog.debian_release.clone(),
        packages,
        images,
        families,
    }
}

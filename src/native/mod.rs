//! Native system libraries: which releases probably need them, how sure that is, and what an
//! image must add for a resolved closure.

pub mod catalog;

pub use catalog::{
    Catalog, Library, c_toolchain_packages, compiler_packages, compilers_carried,
    cxx_compiler_brings, cxx_compiler_package, install_command, pkg_config_packages,
    toolchain_packages,
};

use crate::model::{Image, PackageId, Registry};
use crate::solve::{BuildKind, Pin};
use serde::Serialize;
use std::collections::BTreeSet;

/// How sure basefit is that a release needs a native library.
#[derive(
    Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, serde::Deserialize,
)]
#[serde(rename_all = "lowercase")]
pub enum Confidence {
    /// A name or summary mentions a catalog library.
    Possible,
    /// Shipped files or a helper dependency point at a native build.
    Likely,
    /// Declared in the release's metadata.
    Certain,
}

impl Confidence {
    /// The word outputs use, as serialised.
    ///
    /// ```
    /// assert_eq!(basefit::native::Confidence::Likely.as_str(), "likely");
    /// ```
    pub fn as_str(self) -> &'static str {
        match self {
            Confidence::Certain => "certain",
            Confidence::Likely => "likely",
            Confidence::Possible => "possible",
        }
    }
}

/// One piece of evidence for a native need of one release.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord, Serialize)]
pub struct Evidence {
    pub confidence: Confidence,
    /// The catalog library id (or the declared name when the catalog lacks it); `None` when
    /// the evidence shows a native build but not against which library.
    pub library: Option<String>,
    /// What was seen, e.g. `declares libxml2` or `ships src/ext/parse.c`.
    pub detail: String,
}

/// File name endings that mean compiled native code or a native build (common practice, no
/// source).
const NATIVE_SOURCE_ENDINGS: &[&str] = &[
    ".c", ".cc", ".cpp", ".cxx", ".c++", ".h", ".hh", ".hpp", ".hxx", ".mm", ".M", ".mi", ".mii",
    ".s", ".S",
];
/// C++ source and header endings (common practice, no source; `.C` is left out, since on a
/// file system that ignores case it is a C file's name, and Objective-C++'s `.mm` too: it
/// needs an Objective-C++ compiler, which the C++ compiler package does not bring). A source
/// build shipping one needs a C++ compiler, which a C toolchain alone does not have.
const CXX_SOURCE_ENDINGS: &[&str] = &[".cc", ".cpp", ".cxx", ".c++", ".hh", ".hpp", ".hxx"];
/// A compiler that no C toolchain package brings, kept in the catalog as a library: a source
/// build shipping a source of its language needs its package as it needs a library's.
#[derive(Debug)]
pub struct CatalogCompiler {
    /// The language, as explanations name it.
    pub language: &'static str,
    /// The catalog entry: the compiler's package, and the runtime a build links.
    pub library: &'static str,
    /// Source file endings of the language.
    pub endings: &'static [&'static str],
    /// The program a build runs for it, when it has one of its own (a shell's "not found").
    pub driver: Option<&'static str>,
    /// The compiler proper the gcc driver runs for such a source: `gcc: fatal error: cannot
    /// execute 'cc1obj'` names it when the package is not installed.
    pub proper: &'static str,
    /// How surely its sources alone show a native build: `.m` is also the ending of MATLAB
    /// and Octave scripts (common practice, no source), so a release whose only native files
    /// are `.m` ones possibly builds Objective-C; beside other native sources or build files,
    /// likely.
    pub alone: Confidence,
}

/// The compilers the catalog holds as libraries.
///
/// - Fortran: the suffixes gfortran compiles as Fortran, fixed and free form, the upper-case
///   ones preprocessed (from memory); its compiler proper is `f951`.
/// - Objective-C (`.m`, preprocessed `.mi`) and Objective-C++ (`.mm`, `.M`, preprocessed
///   `.mii`): the gcc driver runs `cc1obj` and `cc1objplus` for them (made for real on this
///   project's machine, which has neither: `gcc -c x.m` says "cannot execute 'cc1obj'", and
///   `x.M` names `cc1objplus`), which ship in `gobjc` and `gobjc++` on Debian, not in `gcc` or
///   `g++`.
///
/// ```
/// use basefit::native::{CATALOG_COMPILERS, compiler_of_source};
/// assert_eq!(compiler_of_source("src/ext/view.m").unwrap().library, "gobjc");
/// assert_eq!(compiler_of_source("src/ext/solve.F90").unwrap().language, "Fortran");
/// assert!(compiler_of_source("src/ext/glue.c").is_none());
/// assert_eq!(CATALOG_COMPILERS.len(), 3);
/// ```
pub const CATALOG_COMPILERS: &[CatalogCompiler] = &[
    CatalogCompiler {
        language: "Fortran",
        library: "gfortran",
        endings: &[
            ".f", ".for", ".ftn", ".f77", ".f90", ".f95", ".f03", ".f08", ".F", ".FOR", ".F77",
            ".F90", ".F95", ".F03", ".F08",
        ],
        driver: Some("gfortran"),
        proper: "f951",
        alone: Confidence::Likely,
    },
    CatalogCompiler {
        language: "Objective-C",
        library: "gobjc",
        endings: &[".m", ".mi"],
        driver: None,
        proper: "cc1obj",
        alone: Confidence::Possible,
    },
    CatalogCompiler {
        language: "Objective-C++",
        library: "gobjc++",
        endings: &[".mm", ".M", ".mii"],
        driver: None,
        proper: "cc1objplus",
        alone: Confidence::Likely,
    },
];

/// The catalog compiler a source file (a path) needs, if its language has one.
pub fn compiler_of_source(path: &str) -> Option<&'static CatalogCompiler> {
    compiler_slot(path).map(|i| &CATALOG_COMPILERS[i])
}

fn compiler_slot(path: &str) -> Option<usize> {
    let base = path.rsplit('/').next().unwrap_or(path);
    CATALOG_COMPILERS
        .iter()
        .position(|c| c.endings.iter().any(|e| base.ends_with(e)))
}

const NATIVE_BUILD_FILES: &[&str] = &[
    "Makefile",
    "makefile",
    "GNUmakefile",
    "CMakeLists.txt",
    "configure",
    "configure.ac",
    "meson.build",
    "build.ninja",
    "binding.gyp",
];

/// Every piece of evidence for release `index` of `package`, strongest first.
pub fn release_evidence(
    registry: &Registry,
    catalog: &Catalog,
    package: PackageId,
    index: usize,
) -> Vec<Evidence> {
    let pkg = registry.package(package);
    let release = &pkg.releases[index];
    let mut out: Vec<Evidence> = Vec::new();
    if let Some(hints) = &release.native {
        for lib in &hints.libraries {
            let id = catalog
                .by_declared_name(lib)
                .map(|l| l.id.clone())
                .unwrap_or_else(|| lib.clone());
            out.push(Evidence {
                confidence: Confidence::Certain,
                library: Some(id),
                detail: format!("declares {lib}"),
            });
        }
        let mut native_files = 0usize;
        let mut first_native: Option<&str> = None;
        // Per catalog compiler, in table order: its first source and how many there are.
        let mut compiled: Vec<Option<(&str, usize)>> = vec![None; CATALOG_COMPILERS.len()];
        for f in &hints.files {
            let base = f.rsplit('/').next().unwrap_or(f);
            if let Some(slot) = compiler_slot(f) {
                let seen = compiled[slot].get_or_insert((f, 0));
                seen.1 += 1;
            }
            if NATIVE_SOURCE_ENDINGS.iter().any(|e| base.ends_with(e))
                || NATIVE_BUILD_FILES.contains(&base)
            {
                native_files += 1;
                first_native.get_or_insert(f);
            }
            // A shipped copy of a catalog header, or a pkg-config file of a catalog module,
            // names the library it builds against.
            for (header, lib) in catalog.headers() {
                if f == header || f.ends_with(&format!("/{header}")) {
                    out.push(Evidence {
                        confidence: Confidence::Likely,
                        library: Some(lib.id.clone()),
                        detail: format!("ships {f}, a header of {}", lib.id),
                    });
                }
            }
            if let Some(module) = base.strip_suffix(".pc")
                && let Some(lib) = catalog.by_pkg_config(module)
            {
                {
                    out.push(Evidence {
                        confidence: Confidence::Likely,
                        library: Some(lib.id.clone()),
                        detail: format!("ships {f}, naming pkg-config module {module}"),
                    });
                }
            }
        }
        for (compiler, (first, count)) in CATALOG_COMPILERS
            .iter()
            .zip(&compiled)
            .filter_map(|(c, seen)| Some((c, (*seen)?)))
        {
            let id = catalog
                .by_declared_name(compiler.library)
                .map_or_else(|| compiler.library.to_string(), |l| l.id.clone());
            let more = match count {
                1 => String::new(),
                n => format!(" and {} more", n - 1),
            };
            // Other native files beside it make the build, and so the language, likely.
            let confidence = match native_files {
                0 => compiler.alone,
                _ => Confidence::Likely,
            };
            out.push(Evidence {
                confidence,
                library: Some(id),
                detail: format!("ships {} source {first}{more}", compiler.language),
            });
        }
        if let Some(first) = first_native {
            let more = if native_files > 1 {
                format!(
                    " and {} more native source or build files",
                    native_files - 1
                )
            } else {
                String::new()
            };
            out.push(Evidence {
                confidence: Confidence::Likely,
                library: None,
                detail: format!("ships {first}{more}"),
            });
        }
    }
    for d in release.runtime_deps() {
        let target = registry.package(d.package);
        if target.native_helper || catalog.native_helpers.contains(&*target.name) {
            out.push(Evidence {
                confidence: Confidence::Likely,
                library: None,
                detail: format!("depends on native-build helper {}", target.name),
            });
        }
    }
    let mut words: BTreeSet<String> = BTreeSet::new();
    for text in [Some(&*pkg.name), pkg.summary.as_deref()]
        .into_iter()
        .flatten()
    {
        for w in text.split(|c: char| !(c.is_ascii_alphanumeric() || c == '+')) {
            if !w.is_empty() {
                words.insert(w.to_ascii_lowercase());
            }
        }
    }
    for w in &words {
        if let Some(lib) = catalog.by_word(w) {
            out.push(Evidence {
                confidence: Confidence::Possible,
                library: Some(lib.id.clone()),
                detail: format!("name or summary mentions `{w}`"),
            });
        }
    }
    out.sort_by(|a, b| b.confidence.cmp(&a.confidence).then_with(|| a.cmp(b)));
    out.dedup();
    out
}

/// How sure it is that the source build of `pin`, a native build of confidence `native` with
/// the library needs `libs`, compiles C++, and what shows it: as sure as the native build when
/// it ships a C++ source, as sure as the need of a library whose interface is C++ only; not at
/// all when its shipped sources are all of other languages; only possibly when no source shows
/// which language it builds (a declared library alone, a build file), since many bindings are
/// C++.
fn cxx_need(
    registry: &Registry,
    catalog: &Catalog,
    pin: &Pin,
    libs: &[(Option<String>, Confidence, Vec<String>)],
    native: Confidence,
) -> Option<(Confidence, String)> {
    // A library whose interface is C++ only: as sure as the need of it.
    let cxx_library = libs
        .iter()
        .filter_map(|(l, c, _)| {
            let id = l.as_deref()?;
            catalog.get(id).is_some_and(|l| l.cxx).then_some((*c, id))
        })
        .max();
    let release = &registry.package(pin.package).releases[pin.index as usize];
    let files = release.native.as_ref().map_or(&[][..], |n| &n.files[..]);
    let base = |f: &str| f.rsplit('/').next().unwrap_or(f).to_string();
    if let Some(f) = files
        .iter()
        .find(|f| CXX_SOURCE_ENDINGS.iter().any(|e| base(f).ends_with(e)))
    {
        return Some((native, format!("ships {f}, a C++ source")));
    }
    if let Some((c, id)) = cxx_library {
        return Some((c, format!("needs {id}, whose interface is C++")));
    }
    // CMake's `project()` enables C and C++ unless its `LANGUAGES` says otherwise, and fails
    // without a C++ compiler; node-gyp builds link with the C++ compiler (both from memory).
    // Whatever the sources, such a build likely needs C++.
    if let Some(f) = files
        .iter()
        .find(|f| matches!(base(f).as_str(), "CMakeLists.txt" | "binding.gyp"))
    {
        return Some((
            native.min(Confidence::Likely),
            format!("ships {f}, whose build enables C++"),
        ));
    }
    // A `.h` header is C's and C++'s alike: it tells no language.
    let sources_known = files.iter().any(|f| {
        let b = base(f);
        compiler_of_source(&b).is_some()
            || NATIVE_SOURCE_ENDINGS
                .iter()
                .any(|e| *e != ".h" && b.ends_with(e))
    });
    (!sources_known).then(|| {
        (
            Confidence::Possible,
            "shows no source, so its language is unknown".to_string(),
        )
    })
}

/// A native need of a resolved closure, and the package it comes through.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Need {
    pub library: Option<String>,
    pub confidence: Confidence,
    /// The closure package whose release shows the need.
    pub via: String,
    pub build: BuildKind,
    pub evidence: Vec<String>,
}

/// What one installable closure needs from the image, and what the image lacks.
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize)]
pub struct Assessment {
    pub needs: Vec<Need>,
    /// Strongest confidence among source builds that need a C toolchain, when the image lacks one.
    pub toolchain_missing: Option<Confidence>,
    /// Strongest confidence among source builds that need a C++ compiler, when the image has a
    /// C compiler only (see [`cxx_need`]).
    pub cxx_missing: Option<Confidence>,
    /// The closure packages whose source builds need that C++ compiler, each with what shows
    /// it, strongest first: `hashcore: ships src/ext/hash.cpp, a C++ source`.
    pub cxx_because: Vec<(Confidence, String)>,
    /// System packages to add, each with the strongest confidence that asks for it.
    pub missing: Vec<(String, Confidence)>,
    /// Libraries needed but not in the catalog, so no package can be named for them.
    pub unknown_libraries: Vec<String>,
}

impl Assessment {
    /// The strongest confidence of anything missing, if anything is.
    pub fn worst_missing(&self) -> Option<Confidence> {
        self.missing
            .iter()
            .map(|(_, c)| *c)
            .chain(self.toolchain_missing)
            .chain(self.cxx_missing)
            .max()
    }

    pub fn packages_to_add(&self) -> Vec<String> {
        self.missing.iter().map(|(p, _)| p.clone()).collect()
    }
}

/// Assesses a resolved closure on `image`. Native need is transitive: every package of the
/// closure contributes its own evidence, and each need says through which package it comes.
/// A release installed from a prebuilt build for the image's platform needs no compiler and
/// no development package, only the library's runtime package, which an image declaring the
/// development package has too (see [`Catalog::image_has`]).
pub fn assess(
    registry: &Registry,
    catalog: &Catalog,
    image: &Image,
    closure: &[Pin],
) -> Assessment {
    let mut a = Assessment::default();
    let mut missing: std::collections::BTreeMap<String, Confidence> = Default::default();
    let mut unknown: BTreeSet<String> = BTreeSet::new();
    let add_missing =
        |pkg: &str, c: Confidence, missing: &mut std::collections::BTreeMap<String, Confidence>| {
            if !catalog.image_has(image.family, &image.system_packages, pkg) {
                let e = missing.entry(pkg.to_string()).or_insert(c);
                *e = (*e).max(c);
            }
        };
    for pin in closure {
        let evidence = release_evidence(registry, catalog, pin.package, pin.index as usize);
        if evidence.is_empty() {
            continue;
        }
        let via = registry.name(pin.package).to_string();
        // One need per library (the unnamed native build counts as one), at its strongest.
        let mut libs: Vec<(Option<String>, Confidence, Vec<String>)> = Vec::new();
        for e in &evidence {
            match libs.iter_mut().find(|(l, _, _)| *l == e.library) {
                Some((_, c, details)) => {
                    *c = (*c).max(e.confidence);
                    details.push(e.detail.clone());
                }
                None => libs.push((e.library.clone(), e.confidence, vec![e.detail.clone()])),
            }
        }
        // An unnamed native build is subsumed by a named need of at least its confidence.
        let strongest_named = libs
            .iter()
            .filter(|(l, _, _)| l.is_some())
            .map(|(_, c, _)| *c)
            .max();
        libs.retain(|(l, c, _)| l.is_some() || strongest_named.is_none_or(|s| s < *c));
        if pin.build == BuildKind::Source
            && image.toolchain
            && !image.cxx
            && let Some(native) = libs.iter().map(|(_, c, _)| *c).max()
            && let Some((c, why)) = cxx_need(registry, catalog, pin, &libs, native)
        {
            a.cxx_missing = Some(a.cxx_missing.map_or(c, |m| m.max(c)));
            a.cxx_because.push((c, format!("{via}: {why}")));
        }
        for (library, confidence, details) in libs {
            if pin.build == BuildKind::Source && !image.toolchain {
                a.toolchain_missing = Some(
                    a.toolchain_missing
                        .map_or(confidence, |t| t.max(confidence)),
                );
            }
            if let Some(id) = &library {
                match catalog.get(id).and_then(|l| l.families.get(&image.family)) {
                    Some(fam) => {
                        // Every package the build needs: a prebuilt build needs each runtime
                        // package the library's shared objects ship in.
                        let wanted = fam.packages(pin.build);
                        for p in &wanted {
                            add_missing(p, confidence, &mut missing);
                        }
                        // The family is listed without the package this build needs: no
                        // addition can be named, so the need stays unmet.
                        if wanted.is_empty() {
                            unknown.insert(id.clone());
                        }
                    }
                    None => {
                        unknown.insert(id.clone());
                    }
                }
            }
            a.needs.push(Need {
                library,
                confidence,
                via: via.clone(),
                build: pin.build,
                evidence: details,
            });
        }
    }
    if let Some(c) = a.toolchain_missing {
        for p in toolchain_packages(image.family) {
            add_missing(p, c, &mut missing);
        }
    }
    if let Some(c) = a.cxx_missing {
        add_missing(cxx_compiler_package(image.family), c, &mut missing);
    }
    // Strongest first, then by package: the explanation names the first.
    a.cxx_because
        .sort_by(|x, y| y.0.cmp(&x.0).then_with(|| x.1.cmp(&y.1)));
    a.missing = missing.into_iter().collect();
    a.unknown_libraries = unknown.into_iter().collect();
    a
}

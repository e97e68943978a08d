//! The catalog of system libraries: headers, link names, pkg-config modules and the
//! development and runtime package names per OS family.
//!
//! The project ships one (`src/native/catalog.yaml`); a user file can replace entries by id,
//! add new ones and mark registry packages as native-build helpers.

use crate::load::diag::{BadInput, read_text};
use crate::load::yaml::{self, Ctx, Node};
use crate::model::OsFamily;
use crate::solve::image::BuildKind;
use serde::Serialize;
use std::collections::{BTreeMap, BTreeSet, HashMap};
use std::path::Path;
use std::rc::Rc;

const BUILTIN: &str = include_str!("catalog.yaml");
const TOP_FIELDS: &[&str] = &["debian_release", "libraries", "native_helpers"];
const LIBRARY_FIELDS: &[&str] = &[
    "id",
    "summary",
    "aliases",
    "headers",
    "link",
    "pkg_config",
    "cxx",
    "families",
];
const FAMILY_FIELDS: &[&str] = &["dev", "alternatives", "pulled_in_by", "runtime", "source"];

/// Where a family's package names come from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum FactSource {
    /// Checked against the family's package archive.
    Verified,
    /// Written from memory, not checked here.
    Memory,
}

/// The packages that provide a library on one OS family.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct FamilyPackages {
    /// Headers, link symlinks and pkg-config files: needed to build against the library.
    pub dev: Option<String>,
    /// The shared libraries themselves: needed to run a prebuilt build linked against the
    /// library. Several when the library's shared objects ship in several packages (Debian's
    /// pango: `libpango-1.0-0`, `libpangocairo-1.0-0`, `libpangoft2-1.0-0`); a prebuilt build
    /// needs all of them. Empty when the catalog names none.
    pub runtime: Vec<String>,
    /// Other builds of the library's development package (Debian's `libcurl4-gnutls-dev`
    /// beside `libcurl4-openssl-dev`): they give a source build the same headers and link
    /// names, so an image declaring one has what `dev` gives a source build, but not the
    /// runtime packages, since they link other shared objects.
    pub alternatives: Vec<String>,
    /// Packages that depend on `dev` (a transitional or default name such as `libjpeg-dev`):
    /// an image declaring one has `dev`, and through it the runtime packages.
    pub pulled_in_by: Vec<String>,
    pub source: FactSource,
}

impl FamilyPackages {
    /// The packages a release built as `build` needs, all of them: the development package
    /// to build from source, the runtime packages to run a prebuilt build.
    pub fn packages(&self, build: BuildKind) -> Vec<&str> {
        match build {
            BuildKind::Source => self.dev.iter().map(String::as_str).collect(),
            BuildKind::Prebuilt => self.runtime.iter().map(String::as_str).collect(),
        }
    }
}

/// One system library.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Library {
    pub id: String,
    pub summary: String,
    pub aliases: Vec<String>,
    pub headers: Vec<String>,
    pub link: Vec<String>,
    pub pkg_config: Vec<String>,
    /// Its interface is C++ only (`cxx: true`): a source build against it compiles C++.
    pub cxx: bool,
    pub families: BTreeMap<OsFamily, FamilyPackages>,
}

/// The catalog with lookups by header, link name, pkg-config module and alias.
#[derive(Debug, Clone, Default, Serialize)]
pub struct Catalog {
    pub debian_release: String,
    pub libraries: Vec<Library>,
    /// Registry package names marked as native-build helpers by a user file.
    pub native_helpers: BTreeSet<String>,
    #[serde(skip)]
    by_header: BTreeMap<String, usize>,
    #[serde(skip)]
    by_link: BTreeMap<String, usize>,
    #[serde(skip)]
    by_pkg_config: BTreeMap<String, usize>,
    #[serde(skip)]
    by_word: BTreeMap<String, usize>,
}

/// What a library claims for lookups, as (what, the key looked up, as written): names and
/// aliases are looked up in lower case.
fn claims(l: &Library) -> Vec<(&'static str, String, String)> {
    let mut out: Vec<(&'static str, String, String)> = Vec::new();
    out.extend(l.headers.iter().map(|h| ("header", h.clone(), h.clone())));
    out.extend(l.link.iter().map(|k| ("link name", k.clone(), k.clone())));
    out.extend(
        l.pkg_config
            .iter()
            .map(|p| ("pkg-config module", p.clone(), p.clone())),
    );
    out.extend(
        std::iter::once(&l.id)
            .chain(&l.aliases)
            .map(|w| ("name or alias", w.to_lowercase(), w.clone())),
    );
    out
}

impl Catalog {
    /// The catalog shipped with basefit.
    ///
    /// ```
    /// let catalog = basefit::native::Catalog::builtin();
    /// let xml = catalog.by_header("libxml/parser.h").unwrap();
    /// assert_eq!(xml.id, "libxml2");
    /// ```
    pub fn builtin() -> Catalog {
        let mut catalog = Catalog::default();
        // The shipped file is tested to parse; failing here would be a build defect.
        catalog
            .apply("builtin catalog", BUILTIN)
            .unwrap_or_else(|e| panic!("the shipped catalog does not parse: {e}"));
        catalog
    }

    /// The shipped catalog with a user file applied on top.
    pub fn with_override(path: &Path) -> Result<Catalog, BadInput> {
        Ok(Catalog::with_override_counted(path)?.0)
    }

    /// [`Catalog::with_override`], and how many library entries the file gave.
    pub fn with_override_counted(path: &Path) -> Result<(Catalog, usize), BadInput> {
        let mut catalog = Catalog::builtin();
        let text = read_text(path)?;
        let entries = catalog.apply(&path.display().to_string(), &text)?;
        Ok((catalog, entries))
    }

    /// Applies a catalog file: entries replace those with the same id, new ids are added.
    /// Returns how many library entries the file gave (every one is used, or the file is
    /// refused).
    pub fn apply(&mut self, file: &str, text: &str) -> Result<usize, BadInput> {
        let doc = yaml::parse(file, text)?;
        let ctx = Ctx { file };
        let top = ctx.map(&doc, "catalog", TOP_FIELDS)?;
        if let Some(release) = top.opt_str("debian_release")? {
            // Printed after the word "Debian": "Debian Debian 13" read as a typo of the tool.
            if release.trim_start().to_lowercase().starts_with("debian") {
                return Err(ctx.err(
                    top.get("debian_release").unwrap_or(&doc),
                    format!(
                        "`debian_release` `{release}`: give the release alone (`12 (bookworm)`); reports print it after the word Debian"
                    ),
                ));
            }
            self.debian_release = release.to_string();
        }
        // Package names, as a registry's are: one no registry could hold names no package.
        for helper in top.str_list_at("native_helpers")? {
            if let Some(why) = crate::load::diag::name_problem(&helper.value) {
                return Err(BadInput::at(
                    file,
                    helper.line,
                    crate::load::diag::bad_name_detail("`native_helpers` name", &helper.value, why),
                ));
            }
            self.native_helpers.insert(helper.value);
        }
        let libraries = yaml::collect_errors(top.seq("libraries")?, |n| parse_library(ctx, n))?;
        let entries = libraries.len();
        // Every problem of the file in one report, as the YAML readers give them.
        let mut errors = crate::load::diag::SchemaErrors::new();
        let mut seen = BTreeSet::new();
        let mut lines = Vec::new();
        for (line, lib, claim_lines) in libraries {
            if !seen.insert(lib.id.clone()) {
                errors.keep::<()>(Err(BadInput::at(
                    file,
                    line,
                    format!("library `{}` is listed twice", lib.id),
                )));
                continue;
            }
            lines.push((line, lib.id.clone(), claim_lines));
            match self.libraries.iter_mut().find(|l| l.id == lib.id) {
                Some(existing) => *existing = lib,
                None => self.libraries.push(lib),
            }
        }
        // A header, link name, pkg-config module or name that two libraries claim would be
        // looked up as one of them only, the other never found: refused, naming both. One
        // pass over every claim, since the shipped catalog goes through here on every run.
        let mut owners: HashMap<(&str, String), Vec<usize>> = HashMap::new();
        for (i, lib) in self.libraries.iter().enumerate() {
            for (what, key, _) in claims(lib) {
                let owners = owners.entry((what, key)).or_default();
                if !owners.contains(&i) {
                    owners.push(i);
                }
            }
        }
        for (line_of_entry, id, claim_lines) in lines {
            let Some(mine) = self.libraries.iter().position(|l| l.id == id) else {
                continue;
            };
            for (what, key, value) in claims(&self.libraries[mine]) {
                let other = owners[&(what, key)].iter().find(|&&o| o != mine);
                if let Some(&other) = other {
                    // The line of the clashing value, as for every other field's value; the
                    // entry's line only if the value's is unknown.
                    let line = claim_lines.get(&(what, value.clone())).copied();
                    errors.keep::<()>(Err(BadInput::at(
                        file,
                        line.unwrap_or(line_of_entry),
                        format!(
                            "library `{id}`: {what} `{value}` is also library `{}`'s; give it to one library (an entry with that library's id replaces it)",
                            self.libraries[other].id
                        ),
                    )));
                }
            }
        }
        errors.finish()?;
        self.reindex();
        Ok(entries)
    }

    fn reindex(&mut self) {
        self.by_header.clear();
        self.by_link.clear();
        self.by_pkg_config.clear();
        self.by_word.clear();
        for (i, lib) in self.libraries.iter().enumerate() {
            for h in &lib.headers {
                self.by_header.entry(h.clone()).or_insert(i);
            }
            for l in &lib.link {
                self.by_link.entry(l.clone()).or_insert(i);
            }
            for p in &lib.pkg_config {
                self.by_pkg_config.entry(p.clone()).or_insert(i);
            }
            self.by_word.entry(lib.id.to_lowercase()).or_insert(i);
            for a in &lib.aliases {
                self.by_word.entry(a.to_lowercase()).or_insert(i);
            }
        }
    }

    pub fn get(&self, id: &str) -> Option<&Library> {
        self.libraries.iter().find(|l| l.id == id)
    }

    /// The system packages that provide library `id` on `family` for a release built as
    /// `build`, all of them needed: the development package to build from source, the runtime
    /// packages to run a prebuilt build. Empty when the catalog names none.
    pub fn packages_for(&self, id: &str, family: OsFamily, build: BuildKind) -> Vec<&str> {
        let Some(fam) = self.get(id).and_then(|l| l.families.get(&family)) else {
            return Vec::new();
        };
        fam.packages(build)
    }

    /// Whether the catalog names the system packages library `id` needs on `family` for a
    /// release built as `build` (either way when that is not recorded): without them no
    /// advice can say what to add, and a cell needing it stays at risk whatever is added.
    pub fn knows(&self, id: &str, family: OsFamily, build: Option<BuildKind>) -> bool {
        match build {
            Some(build) => !self.packages_for(id, family, build).is_empty(),
            None => [BuildKind::Source, BuildKind::Prebuilt]
                .into_iter()
                .all(|b| !self.packages_for(id, family, b).is_empty()),
        }
    }

    /// A library by id or alias.
    pub fn by_name(&self, name: &str) -> Option<&Library> {
        self.get(name).or_else(|| {
            self.by_word
                .get(&name.to_lowercase())
                .map(|&i| &self.libraries[i])
        })
    }

    pub fn by_header(&self, header: &str) -> Option<&Library> {
        self.by_header.get(header).map(|&i| &self.libraries[i])
    }

    pub fn by_link(&self, link: &str) -> Option<&Library> {
        self.by_link.get(link).map(|&i| &self.libraries[i])
    }

    pub fn by_pkg_config(&self, module: &str) -> Option<&Library> {
        self.by_pkg_config.get(module).map(|&i| &self.libraries[i])
    }

    /// The library a word of a name or summary stands for.
    pub fn by_word(&self, word: &str) -> Option<&Library> {
        self.by_word.get(word).map(|&i| &self.libraries[i])
    }

    /// The header entries ordered by length, longest first, for suffix matching of paths.
    pub fn headers(&self) -> impl Iterator<Item = (&str, &Library)> {
        self.by_header
            .iter()
            .map(|(h, &i)| (h.as_str(), &self.libraries[i]))
    }

    pub fn pkg_config_modules(&self) -> impl Iterator<Item = (&str, &Library)> {
        self.by_pkg_config
            .iter()
            .map(|(m, &i)| (m.as_str(), &self.libraries[i]))
    }
}

/// The packages that give an image of `family` a C and C++ toolchain (which packages to name
/// is common practice, no source). Native sources include C++ (`.cpp`, `.cc`, `.cxx`) and the
/// catalog has C++ libraries (protobuf, gmpxx), so a toolchain must compile C++ too:
/// - debian: `build-essential` depends on gcc, g++, make, libc6-dev and dpkg-dev
///   (`apt-cache depends build-essential` on Debian 12, checked on this project's machine);
/// - alpine: `build-base` pulls in gcc, g++, make and musl-dev (from memory);
/// - rhel: no such meta-package is installed by default, and g++ is the separate package
///   `gcc-c++` (from memory), so all three are named.
pub fn toolchain_packages(family: OsFamily) -> &'static [&'static str] {
    match family {
        OsFamily::Debian => &["build-essential"],
        OsFamily::Alpine => &["build-base"],
        OsFamily::Rhel => &["gcc", "gcc-c++", "make"],
    }
}

/// The packages that give an image of `family` a C compiler without a C++ one: the compiler,
/// `make`, and on debian and alpine the C library's development files (common practice, no
/// source). On debian these are among what `build-essential` depends on (`apt-cache depends
/// build-essential` on Debian 12); alpine's and rhel's are from memory.
pub fn c_toolchain_packages(family: OsFamily) -> &'static [&'static str] {
    match family {
        OsFamily::Debian => &["gcc", "make", "libc6-dev"],
        OsFamily::Alpine => &["gcc", "make", "musl-dev"],
        OsFamily::Rhel => &["gcc", "make"],
    }
}

/// The package that adds the C++ compiler to a C toolchain of `family`: `g++` on debian
/// (`build-essential` depends on it) and alpine (from memory), `gcc-c++` on rhel (from
/// memory).
pub fn cxx_compiler_package(family: OsFamily) -> &'static str {
    match family {
        OsFamily::Debian | OsFamily::Alpine => "g++",
        OsFamily::Rhel => "gcc-c++",
    }
}

/// The packages that give an image of `family` the `pkg-config` program, the one to add
/// first. On debian `pkgconf` ships `/usr/bin/pkg-config` (`dpkg -S` on Debian 12, this
/// project's machine) and `pkg-config` is the transitional package that depends on it
/// (`apt-cache show pkg-config` there); alpine's `pkgconf`, and rhel's `pkgconf-pkg-config` with
/// its older name `pkgconfig`, are from memory. None of them comes with a toolchain package.
pub fn pkg_config_packages(family: OsFamily) -> &'static [&'static str] {
    match family {
        OsFamily::Debian => &["pkgconf", "pkg-config"],
        OsFamily::Alpine => &["pkgconf"],
        OsFamily::Rhel => &["pkgconf-pkg-config", "pkgconfig"],
    }
}

/// Which compilers a set of system packages of `family` gives: (C, C++). The whole toolchain
/// ([`toolchain_packages`]) gives both; the C packages ([`c_toolchain_packages`]) give C, and
/// with the C++ compiler package C++ too.
///
/// ```
/// use basefit::model::OsFamily;
/// use basefit::native::catalog::compilers_carried;
/// let has = |names: &[&str]| names.iter().map(|n| n.to_string()).collect();
/// assert_eq!(compilers_carried(OsFamily::Rhel, &has(&["gcc", "make"])), (true, false));
/// assert_eq!(compilers_carried(OsFamily::Rhel, &has(&["gcc", "gcc-c++", "make"])), (true, true));
/// assert_eq!(compilers_carried(OsFamily::Debian, &has(&["build-essential"])), (true, true));
/// assert_eq!(compilers_carried(OsFamily::Debian, &has(&["gcc", "make"])), (false, false));
/// // g++ brings gcc and libc6-dev with it; make it does not.
/// assert_eq!(compilers_carried(OsFamily::Debian, &has(&["g++", "make"])), (true, true));
/// assert_eq!(compilers_carried(OsFamily::Debian, &has(&["gcc", "g++"])), (false, false));
/// ```
pub fn compilers_carried(
    family: OsFamily,
    packages: &std::collections::BTreeSet<String>,
) -> (bool, bool) {
    if toolchain_packages(family)
        .iter()
        .all(|p| packages.contains(*p))
    {
        return (true, true);
    }
    let cxx = packages.contains(cxx_compiler_package(family));
    let has = |p: &str| packages.contains(p) || (cxx && cxx_compiler_brings(family).contains(&p));
    let c = c_toolchain_packages(family).iter().all(|p| has(p));
    (c, c && cxx)
}

/// The C toolchain packages the C++ compiler package depends on, so an image listing it has
/// them installed: on debian `g++` depends on `gcc`, and through `g++-12` and
/// `libstdc++-12-dev` on `libc6-dev` (`apt-cache depends` on Debian 12, checked on this
/// project's machine); alpine's `g++` on `gcc` and `musl-dev`, rhel's `gcc-c++` on `gcc` (from
/// memory).
pub fn cxx_compiler_brings(family: OsFamily) -> &'static [&'static str] {
    match family {
        OsFamily::Debian => &["gcc", "libc6-dev"],
        OsFamily::Alpine => &["gcc", "musl-dev"],
        OsFamily::Rhel => &["gcc"],
    }
}

/// Every package of `family` that [`compilers_carried`] reads, once each: an image that
/// drops one of them from its base may have lost a compiler.
pub fn compiler_packages(family: OsFamily) -> Vec<&'static str> {
    let mut all: Vec<&'static str> = Vec::new();
    for p in toolchain_packages(family)
        .iter()
        .chain(c_toolchain_packages(family))
        .copied()
        .chain([cxx_compiler_package(family)])
    {
        if !all.contains(&p) {
            all.push(p);
        }
    }
    all
}

/// The one-line command that adds `packages` on `family` (common practice, no source).
///
/// ```
/// use basefit::model::OsFamily;
/// use basefit::native::catalog::install_command;
/// assert_eq!(install_command(OsFamily::Alpine, &["libxml2-dev".into()]), "apk add --no-cache libxml2-dev");
/// ```
pub fn install_command(family: OsFamily, packages: &[String]) -> String {
    let list = packages.join(" ");
    match family {
        OsFamily::Debian => {
            format!("apt-get update && apt-get install -y --no-install-recommends {list}")
        }
        OsFamily::Alpine => format!("apk add --no-cache {list}"),
        OsFamily::Rhel => format!("dnf install -y {list}"),
    }
}

/// The line of each value a library claims for lookups, keyed as [`claims`] names them
/// (what, value as written): a clash is reported at the value's own line.
type ClaimLines = HashMap<(&'static str, String), usize>;

fn parse_library(ctx: Ctx<'_>, node: &Node) -> Result<(usize, Library, ClaimLines), BadInput> {
    let id = ctx
        .map(node, "library", LIBRARY_FIELDS)?
        .required_str("id")?
        .trim()
        .to_string();
    if id.is_empty() {
        return Err(ctx.err(node, "library: `id` is empty"));
    }
    // Messages about a field name the library: "library `cxx`" read as a library named so.
    let m = ctx.map(node, format!("library `{id}`,"), LIBRARY_FIELDS)?;
    // Every problem of the entry in one report: its fields and families are read apart.
    let mut errors = crate::load::diag::SchemaErrors::new();
    let mut claim_lines = ClaimLines::new();
    if let Some(n) = m.get("id") {
        claim_lines.insert(("name or alias", id.clone()), n.line);
    }
    // Headers, link names, pkg-config modules and aliases are lookup keys: an empty one would
    // match what it should not (an empty header is a suffix of every path), so it is refused
    // at its line.
    let mut list = |field: &str, what: &'static str| -> Result<Vec<String>, BadInput> {
        let items = m.str_list_at(field)?;
        for item in &items {
            if item.value.trim().is_empty() {
                return Err(BadInput::at(
                    ctx.file,
                    item.line,
                    format!("library `{id}`: `{field}` has an empty entry"),
                ));
            }
            claim_lines
                .entry((what, item.value.clone()))
                .or_insert(item.line);
        }
        Ok(items.into_iter().map(|item| item.value).collect())
    };
    let headers = errors.keep(list("headers", "header")).unwrap_or_default();
    let link = errors.keep(list("link", "link name")).unwrap_or_default();
    let pkg_config = errors
        .keep(list("pkg_config", "pkg-config module"))
        .unwrap_or_default();
    // An alias is looked up as a word of a package's name or summary: one without a letter
    // (`1`, `2.0`) would take a version number there for the library.
    let alias_items = errors.keep(m.str_list_at("aliases"));
    let mut aliases_read = alias_items.is_some();
    for alias in alias_items.into_iter().flatten() {
        if !alias.value.chars().any(|c| c.is_alphabetic()) {
            aliases_read = false;
            errors.push(BadInput::at(
                ctx.file,
                alias.line,
                format!(
                    "library `{id}`: alias `{}` has no letter; an alias is matched against the words of package names and summaries, where an empty or numeric word names no library",
                    alias.value
                ),
            ));
        }
    }
    // Read again only when the reading above found nothing wrong: a list that is no list, or
    // an empty alias (which has no letter), would otherwise be reported twice.
    let aliases = match aliases_read {
        true => errors
            .keep(list("aliases", "name or alias"))
            .unwrap_or_default(),
        false => Vec::new(),
    };
    let mut families = BTreeMap::new();
    if let Some(f) = m.get("families") {
        let pairs: &[(Rc<Node>, Rc<Node>)] = match &f.value {
            yaml::Value::Map(p) => p,
            _ => {
                errors.push(ctx.err(
                    f,
                    format!("library `{id}`: `families`: expected a mapping of family to packages"),
                ));
                &[]
            }
        };
        for (k, v) in pairs {
            let Some(name) = errors.keep(ctx.str(k, "family name")) else {
                continue;
            };
            let Some(family) = errors.keep(OsFamily::parse(name).ok_or_else(|| {
                ctx.err(
                    k,
                    format!(
                        "library `{id}`: `families`: unknown family `{name}`; expected {}",
                        OsFamily::expected()
                    ),
                )
            })) else {
                continue;
            };
            // Checked on the family read, not the key's text, so two spellings of one family
            // are caught too: otherwise the later would replace the earlier without a word.
            if families.contains_key(&family) {
                errors.push(ctx.err(
                    k,
                    format!("library `{id}`: `families`: family `{name}` given twice"),
                ));
                continue;
            }
            if let Some(packages) = errors.keep(parse_family(ctx, &id, family, name, v)) {
                families.insert(family, packages);
            }
        }
    }
    let summary = errors
        .keep(m.opt_str("summary"))
        .flatten()
        .unwrap_or_default()
        .to_string();
    let cxx = errors
        .keep(m.opt_bool_at("cxx"))
        .flatten()
        .is_some_and(|c| c.value);
    errors.finish()?;
    Ok((
        m.line(),
        Library {
            id,
            summary,
            aliases,
            headers,
            link,
            pkg_config,
            cxx,
            families,
        },
        claim_lines,
    ))
}

/// The packages of one family entry of library `id` (`name` as the file spells the family).
fn parse_family(
    ctx: Ctx<'_>,
    id: &str,
    family: OsFamily,
    name: &str,
    v: &Node,
) -> Result<FamilyPackages, BadInput> {
    // Checked as a record first, so an unknown field reads "family packages: ...".
    ctx.map(v, "family packages", FAMILY_FIELDS)?;
    let fm = ctx.map(v, format!("library `{id}`, family {name},"), FAMILY_FIELDS)?;
    let source = match fm.opt_str("source")? {
        None | Some("memory") => FactSource::Memory,
        Some("verified") => FactSource::Verified,
        Some(other) => {
            return Err(ctx.err(
                v,
                format!(
                    "library `{id}`, family {name}: `source`: expected verified or memory, found `{other}`"
                ),
            ));
        }
    };
    let check = |field: &str, name: &str, line: usize| -> Result<(), BadInput> {
        let problem = if !crate::model::is_system_package_name(name) {
            Some("is not a package name; expected letters, digits and `+ . - _`, starting with a letter or digit".to_string())
        } else if family == OsFamily::Debian && !is_debian_package_name(name) {
            let hint = if is_debian_package_name(&name.to_lowercase()) {
                format!(" (`{}`?)", name.to_lowercase())
            } else {
                String::new()
            };
            Some(format!(
                "is not a Debian package name{hint}; Debian Policy 5.6.1 allows only lower-case letters, digits and `+ - .`, at least two characters, starting with a letter or digit"
            ))
        } else {
            None
        };
        match problem {
            Some(problem) => Err(BadInput::at(
                ctx.file,
                line,
                format!("library `{id}`, family {family}: `{field}` package `{name}` {problem}"),
            )),
            None => Ok(()),
        }
    };
    let dev = match fm.get("dev") {
        None => None,
        Some(node) => {
            let name = ctx.str(node, &format!("library `{id}`, family {name}, `dev`"))?;
            check("dev", name, node.line)?;
            Some(name.to_string())
        }
    };
    // One package or a list of them: a library whose shared objects ship in several
    // packages needs all of them at run time.
    let mut runtime: Vec<String> = Vec::new();
    if let Some(node) = fm.get("runtime") {
        for item in ctx.str_list_at(
            Some(node),
            &format!("library `{id}`, family {name}, `runtime`"),
        )? {
            check("runtime", &item.value, item.line)?;
            if runtime.contains(&item.value) {
                return Err(BadInput::at(
                    ctx.file,
                    item.line,
                    format!(
                        "library `{id}`, family {family}: `runtime` package `{}` is listed twice",
                        item.value
                    ),
                ));
            }
            runtime.push(item.value);
        }
        if runtime.is_empty() {
            return Err(ctx.err(
                node,
                format!(
                    "library `{id}`, family {family}: `runtime` names no package; give a package or a list of them, or leave `runtime` out"
                ),
            ));
        }
    }
    // Packages that stand in for `dev`, two ways (see `FamilyPackages`); a name is
    // refused when it repeats `dev` or one listed before, in either list.
    let mut stand_ins: Vec<Vec<String>> = Vec::new();
    for key in ["alternatives", "pulled_in_by"] {
        let mut names: Vec<String> = Vec::new();
        if let Some(node) = fm.get(key) {
            for item in ctx.str_list_at(
                Some(node),
                &format!("library `{id}`, family {name}, `{key}`"),
            )? {
                check(key, &item.value, item.line)?;
                let at = |message: String| BadInput::at(ctx.file, item.line, message);
                if dev.is_none() {
                    return Err(at(format!(
                        "library `{id}`, family {family}: `{key}` names packages that stand in for `dev`, which is not given"
                    )));
                }
                let seen = names.contains(&item.value)
                    || stand_ins.iter().flatten().any(|n| *n == item.value)
                    || dev.as_ref() == Some(&item.value);
                if seen {
                    return Err(at(format!(
                        "library `{id}`, family {family}: `{key}` package `{}` is listed twice, or is `dev` itself",
                        item.value
                    )));
                }
                names.push(item.value);
            }
        }
        stand_ins.push(names);
    }
    let pulled_in_by = stand_ins.pop().unwrap_or_default();
    let alternatives = stand_ins.pop().unwrap_or_default();
    if dev.is_none() && runtime.is_empty() {
        return Err(ctx.err(
            v,
            format!(
                "library `{id}`, family {family}: names no package; give `dev`, `runtime` or both, or leave the family out"
            ),
        ));
    }
    Ok(FamilyPackages {
        dev,
        runtime,
        alternatives,
        pulled_in_by,
        source,
    })
}

/// Whether `name` can be a Debian package name. Debian Policy Manual, section 5.6.1
/// ("Source"), which section 5.6.7 ("Package") applies to binary package names too: package
/// names must consist only of lower case letters (a-z), digits (0-9), plus (+) and minus (-)
/// signs, and periods (.); they must be at least two characters long and must start with an
/// alphanumeric character. apt finds no package by any other name.
fn is_debian_package_name(name: &str) -> bool {
    name.len() >= 2
        && name.starts_with(|c: char| c.is_ascii_lowercase() || c.is_ascii_digit())
        && name
            .chars()
            .all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || "+-.".contains(c))
}

// Lookups of declared library names, kept apart from the block above.
impl Catalog {
    /// The library a release's declared name stands for: by id or alias first, then by
    /// pkg-config module (`libxml-2.0`), then by link name (`z`, `pq`, `ssl`), the other two
    /// ways metadata commonly spells a system library. Ids and aliases win, since they are
    /// what the catalog means by a name; link names, the shortest, come last.
    pub fn by_declared_name(&self, name: &str) -> Option<&Library> {
        self.by_name(name)
            .or_else(|| self.by_pkg_config(name))
            .or_else(|| self.by_link(name))
    }
}

// What an image's declared packages imply, kept apart from the blocks above.
impl Catalog {
    /// Whether an image of `family` declaring `packages` has system package `package`: when
    /// it declares it, or when it declares the development package of a library one of
    /// whose runtime packages it is, since a development package depends on its library's
    /// runtime packages (for the lists of several, `apt-cache depends` on Debian 12 shows
    /// libpango1.0-dev, libkrb5-dev, nettle-dev and libfftw3-dev depending on every one). On debian every dev/runtime pair of the shipped catalog was checked so with
    /// `apt-cache depends --recurse` on Debian 12 (66 of 68 directly; libkrb5-dev and
    /// libmariadb-dev-compat through another -dev package); on alpine (`-dev`) and rhel
    /// (`-devel`) it is so from memory. A package that depends on the development package
    /// ([`FamilyPackages::pulled_in_by`]) brings it and its runtime packages; another build of
    /// it ([`FamilyPackages::alternatives`]) gives a source build what it gives, but not the
    /// runtime packages, since it links other shared objects. Virtual names (`libcurl-dev`)
    /// are not known here: no image installs one by that name.
    pub fn image_has(&self, family: OsFamily, packages: &BTreeSet<String>, package: &str) -> bool {
        packages.contains(package) || self.stand_in(family, packages, package).is_some()
    }

    /// The package an image of `family` declaring `packages` has `package` through, when it
    /// does not declare it itself (see [`Catalog::image_has`]).
    pub fn stand_in<'p>(
        &self,
        family: OsFamily,
        packages: &'p BTreeSet<String>,
        package: &str,
    ) -> Option<&'p str> {
        fn declared<'a, 'p>(
            packages: &'p BTreeSet<String>,
            mut names: impl Iterator<Item = &'a String>,
        ) -> Option<&'p str> {
            names.find_map(|n| packages.get(n).map(String::as_str))
        }
        self.libraries.iter().find_map(|l| {
            let f = l.families.get(&family)?;
            let dev = f.dev.as_ref()?;
            if dev == package {
                declared(packages, f.pulled_in_by.iter().chain(&f.alternatives))
            } else if f.runtime.iter().any(|r| r == package) {
                // The development package, declared or pulled in, brings the runtime ones.
                declared(packages, std::iter::once(dev).chain(&f.pulled_in_by))
            } else {
                None
            }
        })
    }
}

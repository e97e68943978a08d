//! Runtime images in YAML. An image may extend another and add or remove system packages.

use super::diag::{
    At, BadInput, Ledger, Origin, ProblemKind, RecordKind, bad_name_detail, name_problem,
    read_text, shown_name,
};
use super::lenient::{VersionRead, read_version};
use super::yaml::{self, Ctx, Node};
use crate::model::{Image, ImageSet, OsFamily, Platform};
use std::collections::{BTreeSet, HashMap};
use std::path::Path;

const TOP_FIELDS: &[&str] = &["images"];
const IMAGE_FIELDS: &[&str] = &[
    "id",
    "extends",
    "runtime",
    "family",
    "platform",
    "toolchain",
    "packages",
    "add",
    "remove",
];

/// An image record as written, before its base is applied. The fields checked only once
/// bases are applied keep their lines, so a problem with one names it.
struct Declared {
    id: String,
    /// The line `id` is written on.
    id_line: usize,
    line: usize,
    extends: Option<At<String>>,
    runtime: Option<At<String>>,
    /// As written, as the platform is: an unknown family leaves the image out (see `build`).
    family: Option<At<String>>,
    /// As written: one that cannot be read leaves the image out (see `build`), as an
    /// unreadable runtime does.
    platform: Option<At<String>>,
    toolchain: Option<At<bool>>,
    /// `packages` as written: given, it replaces the base's list (an extending image inherits
    /// only what it does not give); `add` is what extends the base's.
    packages: Option<Vec<String>>,
    add: Vec<String>,
    remove: Vec<At<String>>,
}

impl Declared {
    /// The line a problem with the image's base is about.
    fn extends_line(&self) -> usize {
        self.extends.as_ref().map_or(self.line, |e| e.line)
    }
}

/// Why an image cannot be built, at the line of the value at fault (the record's, when a
/// field is missing).
type Refusal = At<String>;

/// Reads an image file. Schema errors make the file unusable; images whose base is unknown,
/// that extend in a cycle, lack a required field after inheritance, whose runtime or platform
/// cannot be read or whose family is unknown are reported and left out, and so are the images
/// that extend them.
pub fn read_images(path: &Path, ledger: &mut Ledger) -> Result<ImageSet, BadInput> {
    let file = path.display().to_string();
    let text = read_text(path)?;
    read_images_str(&file, &text, ledger)
}

pub fn read_images_str(file: &str, text: &str, ledger: &mut Ledger) -> Result<ImageSet, BadInput> {
    let doc = yaml::parse(file, text)?;
    let ctx = Ctx { file };
    let top = ctx.map(&doc, "image file", TOP_FIELDS)?;
    let items = top.seq("images")?;
    if items.is_empty() {
        return Err(ctx.err(
            &doc,
            "image file: `images` is missing or empty; expected a list of images",
        ));
    }
    let declared = yaml::collect_errors(items, |n| parse_image(ctx, n))?;
    let origin = |line| Origin {
        file: file.to_string(),
        line,
    };

    let mut by_id: HashMap<&str, usize> = HashMap::new();
    let mut unique: Vec<&Declared> = Vec::new();
    for d in &declared {
        ledger.read(RecordKind::Image);
        // Left out as an image that cannot be built, so a result naming it says it was left
        // out and why; an image extending it finds no base.
        if let Some(why) = name_problem(&d.id) {
            ledger.leave_out(
                RecordKind::Image,
                ProblemKind::BadImage,
                origin(d.id_line),
                shown_name(&d.id),
                bad_name_detail("image id", &d.id, why),
            );
            continue;
        }
        if let Some(&first) = by_id.get(d.id.as_str()) {
            ledger.leave_out(
                RecordKind::Image,
                ProblemKind::DuplicateEntry,
                origin(d.line),
                &d.id,
                format!("image id already declared at line {}", unique[first].line),
            );
            continue;
        }
        by_id.insert(&d.id, unique.len());
        unique.push(d);
    }

    let mut resolved: Vec<Option<Result<Image, Refusal>>> = vec![None; unique.len()];
    let mut on_path = vec![false; unique.len()];
    let mut images = Vec::new();
    for i in 0..unique.len() {
        // Noted where the runtime is written, whatever becomes of the image, as a registry
        // version is: an image that extends it inherits the version read, not the text.
        if let Some(written) = &unique[i].runtime
            && let VersionRead::Normalised(v, how) = read_version(&written.value)
        {
            ledger.note(
                ProblemKind::NormalisedVersion,
                origin(written.line),
                &unique[i].id,
                format!("runtime `{}` read as {v} ({how})", written.value),
            );
        }
        let result = resolve(i, &unique, &by_id, &mut resolved, &mut on_path, file);
        match result {
            Ok(image) => {
                // A written `true` up the chain is inherited only while every base between
                // kept it: one that removed the compiler itself passes on no toolchain.
                let base = unique[i]
                    .extends
                    .as_ref()
                    .and_then(|b| by_id.get(b.value.as_str()))
                    .and_then(|&j| resolved[j].as_ref())
                    .and_then(|b| b.as_ref().ok());
                let base_has_toolchain = base.is_some_and(|b| b.toolchain);
                let inherits_true =
                    base_has_toolchain && inherited_flag(i, &unique, &by_id) == Some(true);
                if let Some(At { value: why, line }) =
                    toolchain_contradiction(unique[i], inherits_true, &image, base)
                {
                    ledger.note(
                        ProblemKind::ToolchainContradiction,
                        origin(line),
                        &unique[i].id,
                        why,
                    );
                }
                ledger.used(RecordKind::Image);
                images.push(image);
            }
            Err(why) => ledger.leave_out(
                RecordKind::Image,
                ProblemKind::BadImage,
                origin(why.line),
                &unique[i].id,
                why.value,
            ),
        }
    }
    Ok(ImageSet { images })
}

/// Applies the chain of bases of image `i`, memoised. The chain is walked with an explicit
/// path rather than by recursion, since a file may declare a chain of any length and the
/// stack would not hold it; `on_path` makes the cycle check one lookup per step instead of a
/// scan of the path, which grew with the square of the chain.
///
/// The messages are the ones a depth-first recursion gives, memo writes included: when a
/// cycle closes on an image, that image's cycle message is what the images after it on the
/// path build on, and the image itself is rewritten once the walk unwinds back to it.
fn resolve(
    i: usize,
    declared: &[&Declared],
    by_id: &HashMap<&str, usize>,
    memo: &mut [Option<Result<Image, Refusal>>],
    on_path: &mut [bool],
    file: &str,
) -> Result<Image, Refusal> {
    let mut path: Vec<usize> = Vec::new();
    let mut at = i;
    // The result handed back to the top of the path (or to the caller once it is empty).
    let mut result = loop {
        if let Some(done) = &memo[at] {
            break done.clone();
        }
        let d = declared[at];
        if on_path[at] {
            let names: Vec<&str> = path.iter().map(|&j| declared[j].id.as_str()).collect();
            let cycle = Err(At::new(
                format!("extends in a cycle: {} -> {}", shortened_path(&names), d.id),
                d.extends_line(),
            ));
            memo[at] = Some(cycle.clone());
            break cycle;
        }
        let step = match &d.extends {
            None => Ok(None),
            Some(b) => by_id
                .get(b.value.as_str())
                .copied()
                .map(Some)
                .ok_or_else(|| {
                    // A base named by no name is shown escaped, as its id would be; no image
                    // of that id is planned, whether one was declared (and left out) or not.
                    let message = match name_problem(&b.value) {
                        None => format!("extends `{}`, which is not declared", b.value),
                        Some(why) => format!(
                            "its base {} cannot be built: {}",
                            shown_name(&b.value),
                            bad_name_detail("image id", &b.value, why)
                        ),
                    };
                    At::new(message, b.line)
                }),
        };
        match step {
            Ok(Some(j)) => {
                path.push(at);
                on_path[at] = true;
                at = j;
            }
            Ok(None) => {
                let own = build(d, None, file);
                memo[at] = Some(own.clone());
                break own;
            }
            Err(why) => {
                memo[at] = Some(Err(why.clone()));
                break Err(why);
            }
        }
    };
    while let Some(at) = path.pop() {
        on_path[at] = false;
        let d = declared[at];
        let b = d.extends.as_ref().map_or("", |e| e.value.as_str());
        result = match result {
            Ok(base) => build(d, Some(&base), file),
            // The first cause only: every image of the chain is reported on its own, and
            // repeating each base's message inside the next one made the messages of a long
            // chain grow with the square of its length.
            Err(e) => Err(At::new(
                format!("its base `{b}` cannot be built: {}", first_cause(&e.value)),
                d.extends_line(),
            )),
        };
        memo[at] = Some(result.clone());
    }
    result
}

/// The compiler packages of its family (the whole toolchain, the C compiler's, the C++
/// compiler's) that image `d` drops from its base's packages: by `remove`, or by giving a
/// `packages` list without them (at the record's line). A slim image made either way may have
/// lost a compiler, so the base's `toolchain: true` no longer speaks for it: its packages say
/// what it has, unless its own flag says it has a toolchain by other means.
fn removed_toolchain(d: &Declared, family: OsFamily, base: Option<&Image>) -> Vec<At<String>> {
    // The compiler the base has is its own family's, whichever family this image declares.
    let compiler_packages = crate::native::compiler_packages(base.map_or(family, |b| b.family));
    let mut dropped: Vec<At<String>> = d
        .remove
        .iter()
        .filter(|r| compiler_packages.contains(&r.value.as_str()))
        .cloned()
        .collect();
    if let (Some(given), Some(base)) = (&d.packages, base) {
        for &p in &compiler_packages {
            let kept = given.iter().chain(&d.add).any(|g| g == p);
            if base.system_packages.contains(p) && !kept {
                dropped.push(At::new(p.to_string(), d.line));
            }
        }
    }
    dropped
}

/// The `toolchain` flag image `i` would inherit: the nearest one its bases write. A base that
/// has a toolchain only by carrying the packages writes none, so removing them contradicts
/// nothing the file says.
fn inherited_flag(i: usize, declared: &[&Declared], by_id: &HashMap<&str, usize>) -> Option<bool> {
    let mut at = i;
    // Bounded: a cycle of bases (reported elsewhere) must not loop.
    for _ in 0..declared.len() {
        at = *by_id.get(declared[at].extends.as_ref()?.value.as_str())?;
        if let Some(flag) = &declared[at].toolchain {
            return Some(flag.value);
        }
    }
    None
}

/// Why `image`'s toolchain differs from what its file says, if it does (see `build`), at the
/// line that says otherwise: the packages win over `toolchain: false`, and a removal wins
/// over an inherited `true`. Both are worth a note, since the file reads otherwise.
fn toolchain_contradiction(
    d: &Declared,
    inherits_true: bool,
    image: &Image,
    base: Option<&Image>,
) -> Option<At<String>> {
    let carried: Vec<&str> = crate::native::compiler_packages(image.family)
        .into_iter()
        .filter(|p| image.system_packages.contains(*p))
        .collect();
    // The flag says C++ too, while the packages give a C compiler alone: an images file
    // written before basefit told C from C++ may say so of a C-only image, which would then
    // be planned to build C++.
    if let Some(At { value: true, line }) = d.toolchain
        && crate::native::compilers_carried(image.family, &image.system_packages) == (true, false)
    {
        return Some(At::new(
            format!(
                "says toolchain: true, which means a C++ compiler too, but its compiler packages ({}) give C only, without {}; planned with C++ by the flag (drop the flag if the image has no C++ compiler)",
                and_list(&carried),
                crate::native::cxx_compiler_package(image.family)
            ),
            line,
        ));
    }
    if let Some(At { value: false, line }) = d.toolchain
        && image.toolchain
    {
        return Some(At::new(
            format!(
                "says toolchain: false but carries {}; planned as having {}",
                and_list(&carried),
                compilers_planned(image)
            ),
            line,
        ));
    }
    let removed = removed_toolchain(d, image.family, base);
    let first = removed.first()?;
    (d.toolchain.is_none() && inherits_true && !(image.toolchain && image.cxx)).then(|| {
        let names: Vec<&str> = removed.iter().map(|r| r.value.as_str()).collect();
        At::new(
            format!(
                "inherits toolchain: true from `{}` but {} {}; planned {} (say toolchain: true if it has one by other means)",
                d.extends.as_ref().map(|e| e.value.as_str()).unwrap_or_default(),
                match d.remove.iter().any(|r| r.value == first.value) {
                    true => "removes",
                    false => "gives a `packages` list without",
                },
                and_list(&names),
                match image.toolchain {
                    true => "with a C compiler only",
                    false => "without a C toolchain",
                }
            ),
            first.line,
        )
    })
}

/// What an image that can compile is planned with, as the notes say it.
fn compilers_planned(image: &Image) -> &'static str {
    match image.cxx {
        true => "a C and C++ toolchain",
        false => "a C compiler only (no C++ compiler)",
    }
}

/// `a`, `a and b`, `a, b and c`.
fn and_list(names: &[&str]) -> String {
    match names {
        [] => String::new(),
        [one] => one.to_string(),
        [init @ .., last] => format!("{} and {last}", init.join(", ")),
    }
}

/// What an image's failure comes down to, without the bases it passed through.
fn first_cause(message: &str) -> &str {
    match message.strip_prefix("its base `") {
        Some(rest) => rest
            .split_once("` cannot be built: ")
            .map_or(message, |(_, c)| c),
        None => message,
    }
}

/// A path of image ids for a message, its middle left out past eight: a cycle through
/// thousands of images is reported for each of them.
fn shortened_path(names: &[&str]) -> String {
    if names.len() <= 8 {
        return names.join(" -> ");
    }
    format!(
        "{} -> ({} more) -> {}",
        names[..4].join(" -> "),
        names.len() - 7,
        names[names.len() - 3..].join(" -> ")
    )
}

/// Debian's architecture name for a platform's (common practice, from memory); `None` for one
/// this list does not know.
fn debian_arch(arch: &str) -> Option<&'static str> {
    Some(match crate::model::canonical_arch(arch)? {
        "x86_64" => "amd64",
        "aarch64" => "arm64",
        "i686" => "i386",
        "armv7" => "armhf",
        "ppc64le" => "ppc64el",
        other => other,
    })
}

/// A declared system package as needs are matched against it. Debian's multiarch form
/// `name:arch` of the image's own architecture (or `:any`) is the package `name`, so that
/// `libxml2-dev:amd64` gives an amd64 image what `libxml2-dev` does; of another architecture
/// it is another package, kept as written, which meets no need. Other families have no such
/// form (RPM writes `name.arch`), so a `:` there is refused.
fn native_package_name(
    name: &str,
    family: OsFamily,
    platform: &Platform,
) -> Result<String, String> {
    let Some((bare, arch)) = name.split_once(':') else {
        return Ok(name.to_string());
    };
    if family != OsFamily::Debian {
        return Err(format!(
            "package `{name}`: `:arch` qualifies Debian package names only, and this image's family is {}",
            family.as_str()
        ));
    }
    let own = debian_arch(&platform.arch);
    Ok(match arch == "any" || Some(arch) == own {
        true => bare.to_string(),
        false => name.to_string(),
    })
}

/// Image `d` on top of its base (already built), or on its own when it extends nothing.
fn build(d: &Declared, base: Option<&Image>, file: &str) -> Result<Image, Refusal> {
    let missing = |what: &str| At::new(what.to_string(), d.line);
    let runtime_text = d
        .runtime
        .clone()
        .or_else(|| base.map(|b| At::new(b.runtime.to_string(), d.extends_line())))
        .ok_or_else(|| missing("missing `runtime` (and no base to inherit it from)"))?;
    let runtime = match read_version(&runtime_text.value) {
        VersionRead::Strict(v) | VersionRead::Normalised(v, _) => v,
        VersionRead::Refused(why) => {
            return Err(At::new(
                format!("runtime `{}`: {why}", runtime_text.value),
                runtime_text.line,
            ));
        }
    };
    // Read here for the reason the platform is (below): an unknown family is one image's
    // problem, not the file's.
    let family = match &d.family {
        Some(written) => OsFamily::parse(&written.value).ok_or_else(|| {
            At::new(
                format!(
                    "family `{}`: expected {}",
                    written.value,
                    OsFamily::expected()
                ),
                written.line,
            )
        })?,
        None => base
            .map(|b| b.family)
            .ok_or_else(|| missing("missing `family` (and no base to inherit it from)"))?,
    };
    // Read here rather than with the record, so an unreadable platform leaves out this image
    // and those built on it, as a registry version's unreadable `prebuilt` platform leaves
    // out that version, not the whole file.
    let platform = match &d.platform {
        Some(written) => Platform::parse(&written.value)
            .map_err(|why| At::new(format!("platform {why}"), written.line))?,
        None => base
            .map(|b| b.platform.clone())
            .ok_or_else(|| missing("missing `platform` (and no base to inherit it from)"))?,
    };
    let native_name = |name: &String| native_package_name(name, family, &platform);
    let mut packages: BTreeSet<String> = match &d.packages {
        Some(given) => given
            .iter()
            .map(native_name)
            .collect::<Result<_, _>>()
            .map_err(|why| At::new(why, d.line))?,
        None => base.map(|b| b.system_packages.clone()).unwrap_or_default(),
    };
    for a in &d.add {
        packages.insert(native_name(a).map_err(|why| At::new(why, d.line))?);
    }
    for r in &d.remove {
        let name = native_name(&r.value).map_err(|why| At::new(why, r.line))?;
        if !packages.remove(&name) {
            return Err(At::new(
                format!("removes `{}`, which it does not have", r.value),
                r.line,
            ));
        }
    }
    // An image whose packages include its family's compiler packages can compile, whatever
    // its flag says: `syslibs` advises adding exactly those packages, and an image that took
    // the advice must not go on failing for want of a toolchain. The flag gives both C and
    // C++; packages give what they hold (C alone without the C++ compiler package).
    let (carries_c, carries_cxx) = crate::native::compilers_carried(family, &packages);
    // Dropping the C++ compiler alone leaves the inherited C compiler; dropping any other
    // compiler package leaves what the packages say.
    let (flag_c, flag_cxx) = match (d.toolchain, base) {
        (Some(t), _) => (t.value, t.value),
        (None, None) => (false, false),
        (None, Some(b)) => {
            let removed = removed_toolchain(d, family, base);
            let cxx_package = crate::native::cxx_compiler_package(b.family);
            match removed.iter().all(|r| r.value == cxx_package) {
                true if removed.is_empty() => (b.toolchain, b.cxx),
                true => (b.toolchain, false),
                false => (false, false),
            }
        }
    };
    Ok(Image {
        id: d.id.clone(),
        runtime,
        family,
        platform,
        toolchain: flag_c || carries_c,
        // A C compiler by the flag (its own or inherited) with the C++ compiler package
        // compiles C++: an image that adds back the g++ its base removed has it again.
        cxx: flag_cxx
            || carries_cxx
            || (flag_c && packages.contains(crate::native::cxx_compiler_package(family))),
        system_packages: packages,
        extends: d.extends.as_ref().map(|e| e.value.clone()),
        origin: Origin {
            file: file.to_string(),
            line: d.line,
        },
    })
}

fn parse_image(ctx: Ctx<'_>, node: &Node) -> Result<Declared, BadInput> {
    let m = ctx.map(node, "image", IMAGE_FIELDS)?;
    let id = m.required_str_at("id")?;
    if id.value.trim().is_empty() {
        return Err(BadInput::at(ctx.file, id.line, "image: `id` is empty"));
    }
    let id_line = id.line;
    let id = id.value.trim().to_string();
    // A missing `runtime`, `family` or `platform` is checked once bases are applied (see
    // `build`): like an unreadable one, it is that image's problem, not the whole file's.
    let extends = m.opt_str_at("extends")?.map(owned);
    // A name that is no system package name is most often a list written as one text
    // (`packages: gcc, make`), which would be read as one package the image lacks.
    let names = |key: &str| -> Result<Vec<At<String>>, BadInput> {
        let items = m.str_list_at(key)?;
        for item in &items {
            // Debian's multiarch form `name:arch` names a package too (common practice).
            let valid = match item.value.split_once(':') {
                Some((name, arch)) => {
                    crate::model::is_system_package_name(name)
                        && crate::model::is_system_package_name(arch)
                }
                None => crate::model::is_system_package_name(&item.value),
            };
            if !valid {
                return Err(BadInput::at(
                    ctx.file,
                    item.line,
                    format!(
                        "image `{id}`: `{key}`: `{}` is not a system package name (letters, digits, `+`, `.`, `-`, `_`, starting with a letter or digit, and an optional `:arch`); several are written as a list, `[a, b]`",
                        item.value
                    ),
                ));
            }
        }
        Ok(items)
    };
    let values = |items: Vec<At<String>>| items.into_iter().map(|i| i.value).collect();
    let packages = match m.get("packages") {
        Some(_) => Some(values(names("packages")?)),
        None => None,
    };
    let add = values(names("add")?);
    let remove = names("remove")?;
    Ok(Declared {
        id,
        id_line,
        line: m.line(),
        extends,
        runtime: m.opt_str_at("runtime")?.map(owned),
        family: m.opt_str_at("family")?.map(owned),
        platform: m.opt_str_at("platform")?.map(owned),
        toolchain: m.opt_bool_at("toolchain")?,
        packages,
        add,
        remove,
    })
}

fn owned(text: At<&str>) -> At<String> {
    At::new(text.value.to_owned(), text.line)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Each problem names the line of the value at fault, not the line where the image's
    /// record starts.
    #[test]
    fn problems_name_the_line_of_the_value() {
        let text = concat!(
            "images:\n",
            "  - id: base\n",
            "    runtime: 3.0.0\n",
            "    family: debian\n",
            "    platform: linux/glibc/x86_64\n",
            "  - id: orphan\n",
            "    add: [curl]\n",
            "    extends: nobody\n",
            "  - id: odd\n",
            "    family: debian\n",
            "    platform: linux/glibc/x86_64\n",
            "    runtime: nightly\n",
            "  - id: trimmed\n",
            "    extends: base\n",
            "    remove:\n",
            "      - zlib1g\n",
            "  - id: loop-a\n",
            "    family: debian\n",
            "    extends: loop-b\n",
            "  - id: loop-b\n",
            "    platform: linux/glibc/x86_64\n",
            "    extends: loop-a\n",
            "  - id: heir\n",
            "    runtime: 3.1.0\n",
            "    extends: orphan\n",
            "  - id: compiler\n",
            "    extends: base\n",
            "    add: [build-essential]\n",
            "    toolchain: false\n",
        );
        let mut ledger = Ledger::default();
        let images = read_images_str("img.yaml", text, &mut ledger).unwrap();
        let kept: Vec<&str> = images.images.iter().map(|i| i.id.as_str()).collect();
        assert_eq!(kept, ["base", "compiler"]);
        ledger.sort();
        let found: Vec<(String, &str, ProblemKind)> = ledger
            .problems
            .iter()
            .map(|p| (p.origin.to_string(), p.subject.as_str(), p.kind))
            .collect();
        let want = |at: &str, id, kind| (at.to_string(), id, kind);
        assert_eq!(
            found,
            [
                want("img.yaml:8", "orphan", ProblemKind::BadImage),
                want("img.yaml:12", "odd", ProblemKind::BadImage),
                want("img.yaml:16", "trimmed", ProblemKind::BadImage),
                want("img.yaml:19", "loop-a", ProblemKind::BadImage),
                want("img.yaml:22", "loop-b", ProblemKind::BadImage),
                want("img.yaml:25", "heir", ProblemKind::BadImage),
                want(
                    "img.yaml:29",
                    "compiler",
                    ProblemKind::ToolchainContradiction
                ),
            ],
            "{:?}",
            ledger.problems
        );
    }

    /// A list written as one text (`packages: gcc, make`) once read as one package the image
    /// lacks, so every native prediction for it went wrong and `check` said nothing (found by
    /// an end-to-end review). A text that is no system package name is refused at its line,
    /// in `packages`, `add` and `remove` alike; a single name stays a list of one.
    #[test]
    fn a_package_list_written_as_one_text_is_refused() {
        let head = "images:\n  - id: i\n    runtime: 2.0.0\n    family: debian\n    platform: linux/glibc/x86_64\n";
        for (field, value) in [
            ("packages", "build-essential, zlib1g-dev"),
            ("packages", "zlib1g-dev libyaml-dev"),
            ("add", "\"gcc;rm\""),
            ("remove", "[make, \"-y\"]"),
        ] {
            let text = format!("{head}    {field}: {value}\n");
            let mut ledger = Ledger::default();
            let err = read_images_str("img.yaml", &text, &mut ledger).unwrap_err();
            let shown = err.to_string();
            assert!(
                shown.starts_with("img.yaml:6: image `i`: `")
                    && shown.contains("is not a system package name"),
                "{field}: {value}: {shown}"
            );
        }
        let text =
            format!("{head}    packages: zlib1g-dev\n    add: [gcc-c++, libfoo_2.0, libc6:i386]\n");
        let mut ledger = Ledger::default();
        let images = read_images_str("img.yaml", &text, &mut ledger).unwrap();
        let image = images.get("i").unwrap();
        for p in ["zlib1g-dev", "gcc-c++", "libfoo_2.0", "libc6:i386"] {
            assert!(image.system_packages.contains(p), "{p}: {image:?}");
        }
    }

    /// A runtime read leniently is noted at the line it is written on, as a registry version
    /// is: once, not again for each image that inherits it, and also when the image is left
    /// out for another reason.
    #[test]
    fn normalised_runtimes_are_noted_where_written() {
        let text = concat!(
            "images:\n",
            "  - id: base\n",
            "    family: debian\n",
            "    runtime: \"3.1\"\n",
            "    platform: linux/glibc/x86_64\n",
            "  - id: child\n",
            "    extends: base\n",
            "  - id: grandchild\n",
            "    extends: child\n",
            "  - id: own\n",
            "    extends: base\n",
            "    runtime: v3.2.0\n",
            "  - id: broken\n",
            "    runtime: \"3\"\n",
            "    extends: base\n",
            "    remove: [curl]\n",
            "  - id: strict\n",
            "    extends: base\n",
            "    runtime: 3.3.0\n",
        );
        let mut ledger = Ledger::default();
        let images = read_images_str("img.yaml", text, &mut ledger).unwrap();
        let runtimes: Vec<String> = images
            .images
            .iter()
            .map(|i| format!("{} {}", i.id, i.runtime))
            .collect();
        assert_eq!(
            runtimes,
            [
                "base 3.1.0",
                "child 3.1.0",
                "grandchild 3.1.0",
                "own 3.2.0",
                "strict 3.3.0"
            ]
        );
        ledger.sort();
        let found: Vec<(String, &str, ProblemKind, &str, bool)> = ledger
            .problems
            .iter()
            .map(|p| {
                let at = p.origin.to_string();
                (
                    at,
                    p.subject.as_str(),
                    p.kind,
                    p.detail.as_str(),
                    p.left_out,
                )
            })
            .collect();
        let normalised = ProblemKind::NormalisedVersion;
        assert_eq!(
            found,
            [
                (
                    "img.yaml:4".to_string(),
                    "base",
                    normalised,
                    "runtime `3.1` read as 3.1.0 (missing components filled with 0)",
                    false
                ),
                (
                    "img.yaml:12".to_string(),
                    "own",
                    normalised,
                    "runtime `v3.2.0` read as 3.2.0 (leading `v` removed)",
                    false
                ),
                (
                    "img.yaml:14".to_string(),
                    "broken",
                    normalised,
                    "runtime `3` read as 3.0.0 (missing components filled with 0)",
                    false
                ),
                (
                    "img.yaml:16".to_string(),
                    "broken",
                    ProblemKind::BadImage,
                    "removes `curl`, which it does not have",
                    true
                ),
            ]
        );
        assert!(ledger.unbalanced().is_empty());
    }

    #[test]
    fn empty_id_is_refused_at_its_line() {
        let text = "images:\n  - runtime: 3.0.0\n    family: debian\n    id: \" \"\n";
        let err = read_images_str("img.yaml", text, &mut Ledger::default()).unwrap_err();
        assert_eq!(err.to_string(), "img.yaml:4: image: `id` is empty");
    }
}

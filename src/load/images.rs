//! Runtime images in YAML. An image may extend another and add or remove system packages.

use super::diag::{BadInput, Ledger, Origin, ProblemKind, RecordKind, read_text};
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

/// An image record as written, before its base is applied.
struct Declared {
    id: String,
    line: usize,
    extends: Option<String>,
    runtime: Option<String>,
    family: Option<OsFamily>,
    platform: Option<Platform>,
    toolchain: Option<bool>,
    add: Vec<String>,
    remove: Vec<String>,
}

/// Reads an image file. Schema errors make the file unusable; images whose base is unknown,
/// that extend in a cycle, or lack a required field after inheritance are reported and left
/// out.
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

    let mut resolved: Vec<Option<Result<Image, String>>> = vec![None; unique.len()];
    let mut on_path = vec![false; unique.len()];
    let mut images = Vec::new();
    for i in 0..unique.len() {
        let result = resolve(i, &unique, &by_id, &mut resolved, &mut on_path, file);
        match result {
            Ok(image) => {
                let base_toolchain = unique[i]
                    .extends
                    .as_deref()
                    .and_then(|b| by_id.get(b))
                    .and_then(|&j| resolved[j].as_ref())
                    .is_some_and(|b| b.as_ref().is_ok_and(|b| b.toolchain));
                if let Some(why) = toolchain_contradiction(unique[i], base_toolchain, &image) {
                    ledger.note(
                        ProblemKind::ToolchainContradiction,
                        origin(unique[i].line),
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
                origin(unique[i].line),
                &unique[i].id,
                why,
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
    memo: &mut [Option<Result<Image, String>>],
    on_path: &mut [bool],
    file: &str,
) -> Result<Image, String> {
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
            let cycle = Err(format!(
                "extends in a cycle: {} -> {}",
                shortened_path(&names),
                d.id
            ));
            memo[at] = Some(cycle.clone());
            break cycle;
        }
        let step = match &d.extends {
            None => Ok(None),
            Some(b) => by_id
                .get(b.as_str())
                .copied()
                .map(Some)
                .ok_or_else(|| format!("extends `{b}`, which is not declared")),
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
        let b = d.extends.as_deref().unwrap_or_default();
        result = match result {
            Ok(base) => build(d, Some(&base), file),
            // The first cause only: every image of the chain is reported on its own, and
            // repeating each base's message inside the next one made the messages of a long
            // chain grow with the square of its length.
            Err(e) => Err(format!(
                "its base `{b}` cannot be built: {}",
                first_cause(&e)
            )),
        };
        memo[at] = Some(result.clone());
    }
    result
}

/// The toolchain packages of its family that image `d` removes. A slim image made by
/// removing the compiler from its base has no compiler, so the base's `toolchain: true` no
/// longer speaks for it; only its own flag can say it has one by other means.
fn removed_toolchain(d: &Declared, family: OsFamily) -> Vec<&str> {
    let toolchain_packages = crate::native::toolchain_packages(family);
    d.remove
        .iter()
        .map(String::as_str)
        .filter(|r| toolchain_packages.contains(r))
        .collect()
}

/// Why `image`'s toolchain differs from what its file says, if it does (see `build`): the
/// packages win over `toolchain: false`, and a removal wins over an inherited `true`. Both
/// are worth a note, since the file reads otherwise.
fn toolchain_contradiction(d: &Declared, base_toolchain: bool, image: &Image) -> Option<String> {
    if d.toolchain == Some(false) && image.toolchain {
        return Some(format!(
            "says toolchain: false but carries {}; planned as having a C toolchain",
            crate::native::toolchain_packages(image.family).join(" and ")
        ));
    }
    let removed = removed_toolchain(d, image.family);
    (d.toolchain.is_none() && base_toolchain && !image.toolchain && !removed.is_empty()).then(
        || {
            format!(
                "inherits toolchain: true from `{}` but removes {}; planned without a C toolchain (say toolchain: true if it has one by other means)",
                d.extends.as_deref().unwrap_or_default(),
                removed.join(" and ")
            )
        },
    )
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

/// Image `d` on top of its base (already built), or on its own when it extends nothing.
fn build(d: &Declared, base: Option<&Image>, file: &str) -> Result<Image, String> {
    let runtime_text = d
        .runtime
        .clone()
        .or_else(|| base.map(|b| b.runtime.to_string()))
        .ok_or("missing `runtime` (and no base to inherit it from)")?;
    let runtime = match read_version(&runtime_text) {
        VersionRead::Strict(v) | VersionRead::Normalised(v, _) => v,
        VersionRead::Refused(why) => return Err(format!("runtime `{runtime_text}`: {why}")),
    };
    let family = d
        .family
        .or(base.map(|b| b.family))
        .ok_or("missing `family` (and no base to inherit it from)")?;
    let platform = d
        .platform
        .clone()
        .or_else(|| base.map(|b| b.platform.clone()))
        .ok_or("missing `platform` (and no base to inherit it from)")?;
    let mut packages: BTreeSet<String> =
        base.map(|b| b.system_packages.clone()).unwrap_or_default();
    packages.extend(d.add.iter().cloned());
    for r in &d.remove {
        if !packages.remove(r) {
            return Err(format!("removes `{r}`, which it does not have"));
        }
    }
    // An image whose packages include its family's toolchain packages can compile, whatever
    // its flag says: `syslibs` advises adding exactly those packages, and an image that took
    // the advice must not go on failing for want of a toolchain.
    let toolchain_packages = crate::native::toolchain_packages(family);
    let carries_toolchain = toolchain_packages.iter().all(|p| packages.contains(*p));
    let toolchain = d
        .toolchain
        .or(base
            .map(|b| b.toolchain)
            .filter(|_| removed_toolchain(d, family).is_empty()))
        .unwrap_or(false)
        || carries_toolchain;
    Ok(Image {
        id: d.id.clone(),
        runtime,
        family,
        platform,
        toolchain,
        system_packages: packages,
        extends: d.extends.clone(),
        origin: Origin {
            file: file.to_string(),
            line: d.line,
        },
    })
}

fn parse_image(ctx: Ctx<'_>, node: &Node) -> Result<Declared, BadInput> {
    let m = ctx.map(node, "image", IMAGE_FIELDS)?;
    let id = m.required_str("id")?.trim().to_string();
    if id.is_empty() {
        return Err(ctx.err(node, "image: `id` is empty"));
    }
    let extends = m.opt_str("extends")?.map(str::to_owned);
    if extends.is_none() {
        for key in ["runtime", "family", "platform"] {
            m.required(key)?;
        }
    }
    let family = match m.get("family") {
        None => None,
        Some(n) => {
            let text = ctx.str(n, "image `family`")?;
            Some(OsFamily::parse(text).ok_or_else(|| {
                ctx.err(
                    n,
                    format!("image `family`: expected debian, alpine or rhel, found `{text}`"),
                )
            })?)
        }
    };
    let platform = match m.get("platform") {
        None => None,
        Some(n) => {
            Some(Platform::parse(ctx.str(n, "image `platform`")?).map_err(|e| ctx.err(n, e))?)
        }
    };
    let mut add = m.str_list("packages")?;
    add.extend(m.str_list("add")?);
    Ok(Declared {
        id,
        line: m.line(),
        extends,
        runtime: m.opt_str("runtime")?.map(str::to_owned),
        family,
        platform,
        toolchain: m.opt_bool("toolchain")?,
        add,
        remove: m.str_list("remove")?,
    })
}

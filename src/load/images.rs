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
    let mut images = Vec::new();
    for i in 0..unique.len() {
        let result = resolve(i, &unique, &by_id, &mut resolved, &mut Vec::new(), file);
        match result {
            Ok(image) => {
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

/// Applies the chain of bases of image `i`, memoised; `path` detects cycles.
fn resolve(
    i: usize,
    declared: &[&Declared],
    by_id: &HashMap<&str, usize>,
    memo: &mut Vec<Option<Result<Image, String>>>,
    path: &mut Vec<usize>,
    file: &str,
) -> Result<Image, String> {
    if let Some(done) = &memo[i] {
        return done.clone();
    }
    let d = declared[i];
    let result = (|| {
        if path.contains(&i) {
            let names: Vec<&str> = path.iter().map(|&j| declared[j].id.as_str()).collect();
            return Err(format!(
                "extends in a cycle: {} -> {}",
                names.join(" -> "),
                d.id
            ));
        }
        let base = match &d.extends {
            None => None,
            Some(b) => {
                let &j = by_id
                    .get(b.as_str())
                    .ok_or_else(|| format!("extends `{b}`, which is not declared"))?;
                path.push(i);
                let base = resolve(j, declared, by_id, memo, path, file);
                path.pop();
                Some(base.map_err(|e| format!("its base `{b}` cannot be built: {e}"))?)
            }
        };
        let runtime_text = d
            .runtime
            .clone()
            .or_else(|| base.as_ref().map(|b| b.runtime.to_string()))
            .ok_or("missing `runtime` (and no base to inherit it from)")?;
        let runtime = match read_version(&runtime_text) {
            VersionRead::Strict(v) | VersionRead::Normalised(v, _) => v,
            VersionRead::Refused(why) => return Err(format!("runtime `{runtime_text}`: {why}")),
        };
        let family = d
            .family
            .or(base.as_ref().map(|b| b.family))
            .ok_or("missing `family` (and no base to inherit it from)")?;
        let platform = d
            .platform
            .clone()
            .or_else(|| base.as_ref().map(|b| b.platform.clone()))
            .ok_or("missing `platform` (and no base to inherit it from)")?;
        let toolchain = d
            .toolchain
            .or(base.as_ref().map(|b| b.toolchain))
            .unwrap_or(false);
        let mut packages: BTreeSet<String> = base
            .as_ref()
            .map(|b| b.system_packages.clone())
            .unwrap_or_default();
        packages.extend(d.add.iter().cloned());
        for r in &d.remove {
            if !packages.remove(r) {
                return Err(format!("removes `{r}`, which it does not have"));
            }
        }
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
    })();
    memo[i] = Some(result.clone());
    result
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

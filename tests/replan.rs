//! Incremental re-plans give exactly a cold plan's results; shards merge into exactly the
//! bytes of a single run.

mod common;

use basefit::load::Inputs;
use basefit::plan::replan::{PlanCache, ReplanStats, Shard, merge_shards, replan};
use basefit::plan::{Matrix, PlanOptions, plan};
use basefit::report::{to_json, to_yaml};

fn demo() -> Inputs {
    common::demo_inputs(Vec::new())
}

#[test]
fn shards_merge_into_the_single_run() {
    let inputs = demo();
    let options = PlanOptions::default();
    let whole = plan(&inputs, &options);
    for count in [1, 3, 7] {
        let parts: Vec<Matrix> = (1..=count)
            .map(|index| {
                let m = replan(&inputs, &options, None, Some(Shard { index, count }))
                    .0
                    .matrix;
                // Through JSON, as the merge command reads shard files.
                serde_json::from_str(&to_json(&m)).unwrap()
            })
            .collect();
        let total: usize = parts.iter().map(|p| p.cells.len()).sum();
        assert_eq!(total, whole.cells.len());
        let merged = merge_shards(parts).unwrap();
        assert!(
            to_json(&merged) == to_json(&whole),
            "JSON differs for {count} shards"
        );
        assert!(
            to_yaml(&merged) == to_yaml(&whole),
            "YAML differs for {count} shards"
        );
    }
}

#[test]
fn merging_refuses_incomplete_or_repeated_shards() {
    let inputs = demo();
    let options = PlanOptions::default();
    let shard = |index| {
        replan(&inputs, &options, None, Some(Shard { index, count: 3 }))
            .0
            .matrix
    };
    assert!(
        merge_shards(vec![shard(1), shard(2)])
            .unwrap_err()
            .message
            .contains("shard 3/3 is missing")
    );
    assert!(
        merge_shards(vec![shard(1), shard(1), shard(3)])
            .unwrap_err()
            .message
            .contains("given twice")
    );
}

#[test]
fn replan_after_a_change_reuses_what_it_can_and_equals_a_cold_plan() {
    let mut inputs = demo();
    let options = PlanOptions::default();
    let (cache, stats) = replan(&inputs, &options, None, None);
    let first = cache.matrix.clone();
    assert_eq!(stats.reused, 0);
    // Unchanged inputs: everything is reused.
    let (cache, stats) = replan(&inputs, &options, Some(cache), None);
    assert_eq!(stats.solved, 0);
    assert!(to_json(&cache.matrix) == to_json(&first));
    // wattle-core's 2.x line stops needing runtime >= 3.1: every cell that consulted it is
    // solved again, the rest is reused.
    let id = inputs.registry.id("wattle-core").unwrap();
    let relaxed = inputs.registry.intern_requirement(">=2.4").unwrap();
    for r in &mut inputs.registry.package_mut(id).releases {
        if r.version.major == 2 {
            r.runtime = Some(relaxed);
        }
    }
    let (warm, stats) = replan(&inputs, &options, Some(cache), None);
    let warm = warm.matrix;
    let cold = plan(&inputs, &options);
    assert!(
        to_json(&warm) == to_json(&cold),
        "re-plan differs from a cold plan"
    );
    assert!(stats.reused > 0 && stats.solved > 0, "{stats:?}");
    assert!(to_json(&cold) != to_json(&first), "the change must matter");
    // A cell that never looked at wattle-core was reused, one that did was solved again.
    let saltbush_before = first.cell("saltbush", "deb-2.4").unwrap();
    let saltbush_after = warm.cell("saltbush", "deb-2.4").unwrap();
    assert_ne!(saltbush_before.outcome, saltbush_after.outcome);
}

#[test]
fn cells_that_moved_in_the_lists_are_found_by_name_and_reused() {
    let mut inputs = demo();
    let options = PlanOptions::default();
    let (cache, _) = replan(&inputs, &options, None, None);
    // Both lists reversed, and the list's first package named once more at its end: no cell
    // sits where it sat, and one old cell serves two.
    let entries = &mut inputs.priorities.entries;
    entries.reverse();
    entries.push(entries[0].clone());
    inputs.images.images.reverse();
    let (warm, stats) = replan(&inputs, &options, Some(cache), None);
    assert_eq!(stats.solved, 0, "nothing any cell read changed");
    let (cold, _) = replan(&inputs, &options, None, None);
    assert!(serde_json::to_string(&warm).unwrap() == serde_json::to_string(&cold).unwrap());
}

#[test]
fn a_changed_image_or_option_invalidates_its_cells() {
    let mut inputs = demo();
    let options = PlanOptions::default();
    let (cache, _) = replan(&inputs, &options, None, None);
    inputs.images.images[0]
        .system_packages
        .insert("libxml2-dev-extra".into());
    let (_, stats) = replan(&inputs, &options, Some(cache.clone()), None);
    assert_eq!(
        stats.solved,
        inputs.priorities.entries.len(),
        "one image's column is solved again"
    );
    // Cells are numbered entry by entry, each entry's images in order.
    let images = inputs.images.images.len();
    let column: Vec<usize> = (0..inputs.priorities.entries.len())
        .map(|entry| entry * images)
        .collect();
    assert_eq!(stats.solved_cells, column);
    // A shard numbers its cells as the whole plan does.
    let shard = Shard { index: 2, count: 3 };
    let (_, stats) = replan(&inputs, &options, Some(cache.clone()), Some(shard));
    let in_shard: Vec<usize> = column
        .iter()
        .copied()
        .filter(|&i| shard.contains(i))
        .collect();
    assert!(!in_shard.is_empty());
    assert_eq!(stats.solved_cells, in_shard);
    let other = PlanOptions {
        budget: 7,
        ..PlanOptions::default()
    };
    let (_, stats) = replan(&inputs, &other, Some(cache.clone()), None);
    assert_eq!(stats.reused, 0);

    // The C++ compiler alone (an image gaining or losing it while its packages and C
    // compiler stay) changes what its source builds need: its column is solved again.
    let mut cxx_changed = inputs.clone();
    let (cache, _) = replan(&cxx_changed, &options, None, None);
    cxx_changed.images.images[0].cxx = !cxx_changed.images.images[0].cxx;
    let (_, stats) = replan(&cxx_changed, &options, Some(cache), None);
    assert_eq!(stats.solved_cells, column);
}

/// A small registry (`app` depends on `lib ^1`) planned on one image, then re-planned after
/// `lib`'s versions change to `lib_versions`; returns the warm and cold matrices as JSON and
/// how many cells the warm re-plan solved again.
fn replan_after_lib_versions(lib_versions: &[&str]) -> (String, String, usize) {
    let registry_text = |versions: &[&str]| {
        let mut text = String::from(
            "packages:\n- name: app\n  versions:\n  - version: 1.0.0\n    depends: [{name: lib, req: '^1'}]\n- name: lib\n  versions:\n",
        );
        for v in versions {
            text.push_str(&format!("  - {{version: {v}}}\n"));
        }
        text
    };
    let (warm, stats, cold) = warm_and_cold(
        &registry_text(&["1.0.0", "2.0.0"]),
        &registry_text(lib_versions),
        &["app"],
        &PlanOptions::default(),
    );
    (to_json(&warm.matrix), to_json(&cold.matrix), stats.solved)
}

/// Plans the registry `before` cold, then re-plans the registry `after` warm from its cache
/// and cold; returns the warm cache, its reuse counts and the cold cache.
fn warm_and_cold(
    before: &str,
    after: &str,
    names: &[&str],
    options: &PlanOptions,
) -> (PlanCache, ReplanStats, PlanCache) {
    let (cache, _) = replan(&small_inputs(before, names), options, None, None);
    let after = small_inputs(after, names);
    let (warm, stats) = replan(&after, options, Some(cache), None);
    let (cold, _) = replan(&after, options, None, None);
    (warm, stats, cold)
}

#[test]
fn a_release_published_outside_every_requirement_seen_keeps_the_cell() {
    // lib 3.0.0 is newer than everything, and `^1` does not admit it (Semantic Versioning
    // 2.0.0 caret rule as the semver crate implements it): app's cell is reused.
    let (warm, cold, solved) = replan_after_lib_versions(&["1.0.0", "2.0.0", "3.0.0"]);
    assert!(warm == cold);
    assert_eq!(solved, 0);
}

#[test]
fn a_release_published_inside_a_requirement_seen_is_solved_again() {
    // lib 1.5.0 sorts between 1.0.0 and 2.0.0, so the old list is no longer a prefix, and
    // `^1` admits it.
    let (warm, cold, solved) = replan_after_lib_versions(&["1.0.0", "1.5.0", "2.0.0"]);
    assert!(warm == cold);
    assert_eq!(solved, 1);
    assert!(cold.contains("\"1.5.0\""), "{cold}");
}

#[test]
fn a_renamed_old_release_is_noticed_even_when_releases_were_appended() {
    // 1.0.0 became 1.0.1 and 3.0.0 was published: same count plus one, so only the check
    // that the old versions are still a prefix tells this apart from a plain publication.
    let (warm, cold, solved) = replan_after_lib_versions(&["1.0.1", "2.0.0", "3.0.0"]);
    assert!(warm == cold, "{warm}\n{cold}");
    assert_eq!(solved, 1);
    assert!(cold.contains("\"1.0.1\""), "{cold}");
}

/// A registry from YAML text, one Debian image, and priority entries for `names`.
fn small_inputs(text: &str, names: &[&str]) -> Inputs {
    use basefit::load::images::read_images_str;
    use basefit::load::registry::{RegistryBuilder, read_yaml_str};
    use basefit::model::{Priority, PriorityList};
    let mut builder = RegistryBuilder::new();
    read_yaml_str("r.yaml", text, &mut builder).unwrap();
    let (registry, mut ledger) = builder.finish();
    let images = read_images_str(
        "i.yaml",
        "images:\n- {id: one, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64}\n",
        &mut ledger,
    )
    .unwrap();
    let entries = names
        .iter()
        .enumerate()
        .map(|(i, name)| {
            let origin = basefit::load::diag::Origin {
                file: "p".into(),
                line: i + 1,
            };
            Priority::named(i + 1, name, origin)
        })
        .collect();
    Inputs {
        registry,
        images,
        priorities: PriorityList { entries },
        ledger,
        ..Default::default()
    }
}

/// `root` needs alpha and beta; every alpha conflicts with beta over cee or dee.
const CONFLICT: &str = "packages:
- name: root
  versions:
  - {version: 1.0.0, depends: [{name: alpha, req: '*'}, {name: beta, req: '*'}]}
- name: alpha
  versions:
  - {version: 1.0.0, depends: [{name: cee, req: '^1'}]}
  - {version: 2.0.0, depends: [{name: dee, req: '^1'}]}
- name: beta
  versions:
  - {version: 1.0.0, depends: [{name: cee, req: '^2'}, {name: dee, req: '^2'}]}
- name: cee
  versions: [{version: 1.0.0}, {version: 2.0.0}]
- name: dee
  versions: [{version: 1.0.0}, {version: 2.0.0}]
";

#[test]
fn an_unrelated_record_that_renumbers_packages_changes_no_output() {
    // A package listed first takes the first internal id, so dee is numbered before cee
    // afterwards. Nothing about the cell changed; a reused cell must still read exactly as a
    // cold plan does, so no output may follow internal numbering.
    let options = PlanOptions::default();
    let (cache, _) = replan(
        &small_inputs(CONFLICT, &["root", "absent-name"]),
        &options,
        None,
        None,
    );
    let renumbered = format!(
        "packages:\n- name: newcomer\n  versions:\n  - {{version: 1.0.0, depends: [{{name: dee, req: '*'}}]}}\n{}",
        CONFLICT.trim_start_matches("packages:\n")
    );
    let after = small_inputs(&renumbered, &["root", "absent-name"]);
    let (warm, stats) = replan(&after, &options, Some(cache), None);
    let cold = plan(&after, &options);
    assert!(to_json(&warm.matrix) == to_json(&cold));
    assert_eq!(stats.solved, 0, "nothing the cells read changed");
    let lines = &cold.cell("root", "one").unwrap().explanation;
    let cee = lines.iter().position(|l| l.contains("versions of cee"));
    let dee = lines.iter().position(|l| l.contains("versions of dee"));
    assert!(cee < dee && cee.is_some(), "{lines:?}");
}

#[test]
fn a_damaged_cache_never_panics_and_is_never_trusted_wrongly() {
    let inputs = small_inputs(CONFLICT, &["root", "absent-name"]);
    let options = PlanOptions::default();
    let (cache, _) = replan(&inputs, &options, None, None);
    let cold = to_json(&plan(&inputs, &options));
    let mut damaged = Vec::new();
    // A package table entry claiming more releases than the registry has, and a cell that
    // read the dependencies of that release.
    let mut c = cache.clone();
    let k = c.packages.iter().position(|p| p.name == "root").unwrap();
    let real = c.packages[k].releases.len() as u32;
    c.packages[k].releases.push(7);
    let cell = c
        .matrix
        .cells
        .iter()
        .position(|x| x.package == "root")
        .unwrap();
    // A package's run: counted admissible, refused, fetched, covered (pairs), unsuitable,
    // ceiling and split lists.
    let basis = &mut c.bases[cell];
    basis.packages = vec![k as u32];
    basis.lengths = vec![8];
    basis.observed = vec![0, 0, 1, real, 0, 0, 0, 0];
    damaged.push(c);
    // Packages past the table; lists pointing past release lists (a ceiling or a split too),
    // with a stretch pair cut in half, or cut short (read only when the package changed:
    // here it has not); run lengths past the lists, short of them, or one too few, which
    // no cell survives.
    for (packages, lengths, observed, none_survives) in [
        (vec![999], vec![7], vec![0; 7], true),
        (vec![0], vec![8], vec![1, 50, 0, 0, 0, 0, 0, 0], false),
        (vec![0], vec![8], vec![0, 0, 0, 0, 0, 1, 50, 0], false),
        (vec![0], vec![8], vec![0, 0, 0, 0, 0, 0, 1, 50], false),
        (vec![0], vec![8], vec![0, 0, 0, 1, 0, 0, 0, 0], false),
        (vec![0], vec![2], vec![3, 1], false),
        (vec![0], vec![9], vec![0; 8], true),
        (vec![0], vec![6], vec![0; 7], true),
        (vec![0, 1], vec![7], vec![0; 7], true),
    ] {
        let mut c = cache.clone();
        for b in &mut c.bases {
            b.packages = packages.clone();
            b.lengths = lengths.clone();
            b.observed = observed.clone();
        }
        assert!(c.check().is_err(), "{packages:?} {lengths:?} {observed:?}");
        if none_survives {
            let (warm, stats) = replan(&inputs, &options, Some(c.clone()), None);
            assert_eq!(stats.reused, 0, "{packages:?} {lengths:?} {observed:?}");
            assert!(to_json(&warm.matrix) == cold);
        }
        damaged.push(c);
    }
    // A cell for an absent name that names packages it never saw.
    let mut c = cache.clone();
    for b in &mut c.bases {
        if b.packages.is_empty() {
            b.unchanged = vec![999];
            b.open_ended = vec![999];
        }
    }
    assert!(c.check().is_err());
    damaged.push(c);
    for c in damaged {
        let (warm, _) = replan(&inputs, &options, Some(c), None);
        assert!(to_json(&warm.matrix) == cold);
    }
    // An unchanged package claiming to have had the dependencies of a release it lacks read,
    // read only because lib has a new release since.
    let text = |lib: &str| {
        format!(
            "packages:\n- name: app\n  versions:\n  - {{version: 1.0.0, depends: [{{name: lib, req: '^1'}}]}}\n- name: lib\n  versions: [{lib}]\n"
        )
    };
    let before = small_inputs(&text("{version: 1.0.0}"), &["app"]);
    let (mut c, _) = replan(&before, &options, None, None);
    let app = c.packages.iter().position(|p| p.name == "app").unwrap() as u32;
    let basis = &mut c.bases[0];
    basis.packages.push(app);
    basis.lengths.push(8);
    basis.observed.extend([0, 0, 1, 50, 0, 0, 0, 0]);
    let after = small_inputs(&text("{version: 1.0.0}, {version: 3.0.0}"), &["app"]);
    let (warm, _) = replan(&after, &options, Some(c), None);
    assert!(to_json(&warm.matrix) == to_json(&plan(&after, &options)));
}

#[test]
fn merging_refuses_a_shard_numbered_out_of_range() {
    let inputs = demo();
    let options = PlanOptions::default();
    let mut first = replan(&inputs, &options, None, Some(Shard { index: 1, count: 2 }))
        .0
        .matrix;
    let second = replan(&inputs, &options, None, Some(Shard { index: 2, count: 2 }))
        .0
        .matrix;
    first.shard = Some(Shard { index: 0, count: 2 });
    assert!(
        merge_shards(vec![first, second])
            .unwrap_err()
            .message
            .contains("not a valid shard")
    );
}

#[test]
fn merging_refuses_shards_of_different_plans() {
    let inputs = demo();
    let options = PlanOptions::default();
    let shard = |inputs: &Inputs, options: &PlanOptions, index| {
        replan(inputs, options, None, Some(Shard { index, count: 2 }))
            .0
            .matrix
    };
    let first = shard(&inputs, &options, 1);
    assert!(merge_shards(vec![first.clone(), shard(&inputs, &options, 2)]).is_ok());
    // Each of these leaves the image columns and the priority rows as they were, so only
    // the record of what the shard was planned from tells the plans apart.
    let no_native = PlanOptions {
        native: false,
        ..PlanOptions::default()
    };
    let small_budget = PlanOptions {
        budget: 7,
        ..PlanOptions::default()
    };
    let mut yanked = demo();
    let id = yanked.registry.id("wattle-core").unwrap();
    yanked
        .registry
        .package_mut(id)
        .releases
        .last_mut()
        .unwrap()
        .yanked = true;
    let mut more_system = demo();
    more_system.images.images[0]
        .system_packages
        .insert("libfictional-dev".into());
    for (what, second) in [
        ("native checks off", shard(&inputs, &no_native, 2)),
        ("another budget", shard(&inputs, &small_budget, 2)),
        ("a release yanked", shard(&yanked, &options, 2)),
        ("a system package added", shard(&more_system, &options, 2)),
    ] {
        let Err(err) = merge_shards(vec![first.clone(), second]) else {
            panic!("{what}: shards of two plans merged");
        };
        assert_eq!(err.part, Some(1), "{what}: {err}");
        assert!(
            err.message.contains("planned from other inputs"),
            "{what}: {err}"
        );
    }
    // A shard written before shards recorded their plan does not merge either.
    let mut unmarked = shard(&inputs, &options, 2);
    unmarked.planned_from = None;
    let Err(err) = merge_shards(vec![first, unmarked]) else {
        panic!("a shard without a record of its plan merged");
    };
    assert_eq!(err.part, Some(1));
}

#[test]
fn a_shard_count_no_run_could_have_is_refused_without_sizing_anything() {
    let inputs = demo();
    let options = PlanOptions::default();
    let mut only = replan(&inputs, &options, None, Some(Shard { index: 1, count: 2 }))
        .0
        .matrix;
    only.shard = Some(Shard {
        index: 1,
        count: usize::MAX,
    });
    let err = merge_shards(vec![only]).unwrap_err();
    assert!(err.message.contains("shard 2/"), "{err}");
}

/// `app` needs alpha `^1` and beta; beta 2.0.0 needs an alpha `>=1.2` that is not
/// published, so the solver installs beta 1.0.0 with alpha 1.0.2. beta is decided first,
/// having fewer candidates.
fn narrowing(extra_alpha: &str) -> String {
    format!(
        "packages:
- name: app
  versions:
  - {{version: 1.0.0, depends: [{{name: alpha, req: '^1'}}, {{name: beta, req: '*'}}]}}
- name: alpha
  versions:
  - {{version: 1.0.0, runtime: '>=1.0'}}
  - {{version: 1.0.1, runtime: '>=1.1'}}
  - {{version: 1.0.2, runtime: '>=1.2'}}
{extra_alpha}- name: beta
  versions:
  - {{version: 1.0.0}}
  - {{version: 2.0.0, depends: [{{name: alpha, req: '>=1.2'}}]}}
"
    )
}

#[test]
fn a_refused_release_that_only_it_meets_some_requirements_with_is_solved_again() {
    use basefit::plan::Outcome;
    let decided = |inputs: &Inputs, budget: u64| {
        let options = PlanOptions {
            budget,
            ..PlanOptions::default()
        };
        !matches!(plan(inputs, &options).cells[0].outcome, Outcome::Undecided)
    };
    // The fewest solver steps that decide app before the publication.
    let before = small_inputs(&narrowing(""), &["app"]);
    let budget = (1..100).find(|&b| decided(&before, b)).unwrap();
    let options = PlanOptions {
        budget,
        ..PlanOptions::default()
    };
    let (cache, _) = replan(&before, &options, None, None);
    // alpha 1.2.0 needs a newer runtime than the image's 3.0.0, so it is never a candidate.
    // But `^1` and `>=1.2` both admit it and no older release: where beta 2.0.0 was refused
    // at once for an empty requirement, the solver now asks for a version in {1.2.0} and
    // learns there is none. That step is over the budget, so the answer changes.
    let after = small_inputs(
        &narrowing("  - {version: 1.2.0, runtime: '>=4'}\n"),
        &["app"],
    );
    assert!(!decided(&after, budget), "the publication must cost a step");
    let (warm, stats) = replan(&after, &options, Some(cache), None);
    let cold = plan(&after, &options);
    assert!(to_json(&warm.matrix) == to_json(&cold));
    assert_eq!(stats.solved, 1);
}

#[test]
fn an_admissible_release_inside_a_requirement_but_outside_every_range_asked_keeps_the_cell() {
    // app asks for lib `<1.5` itself, and mid asks for lib `^1`: the solver only ever asks
    // about lib within `<1.5`. lib 1.6.0 is admitted by `^1` (Semantic Versioning 2.0.0 caret
    // rule as the semver crate implements it) and installable, but lies in the same
    // requirements as 1.5.0, whose stretch no range asked about held: the cell is reused.
    let registry = |extra: &str| {
        format!(
            "packages:
- name: app
  versions:
  - {{version: 1.0.0, depends: [{{name: lib, req: '<1.5'}}, {{name: mid, req: '*'}}]}}
- name: mid
  versions:
  - {{version: 1.0.0, depends: [{{name: lib, req: '^1'}}]}}
- name: lib
  versions:
  - {{version: 1.0.0, native: {{libraries: [one]}}}}
  - {{version: 1.4.0, native: {{libraries: [two]}}}}
  - {{version: 1.5.0, native: {{libraries: [three]}}}}
{extra}"
        )
    };
    // app's cell is reused. mid's range `^1` now holds 1.6.0: a look-alike of 1.5.0 stands
    // in for it in a reused cell; one that declares another native library is solved again.
    // (Each release declares its own library, so that none looks like another.)
    for (published, solved) in [
        ("  - {version: 1.6.0, native: {libraries: [three]}}\n", 0),
        ("  - {version: 1.6.0, native: {libraries: [four]}}\n", 1),
    ] {
        let (warm, stats, cold) = warm_and_cold(
            &registry(""),
            &registry(published),
            &["app", "mid"],
            &PlanOptions::default(),
        );
        let cold = cold.matrix;
        assert!(to_json(&warm.matrix) == to_json(&cold), "{published}");
        assert_eq!(
            (stats.reused, stats.solved),
            (2 - solved, solved),
            "{published}"
        );
        assert!(
            to_json(&cold).contains("\"1.6.0\""),
            "mid now picks lib 1.6.0"
        );
    }
}

/// The root's newest release was yanked, so the solve refused it and picked 1.0.0; un-yanked,
/// a cold plan picks 2.0.0. The re-plan must notice the refused release is admissible now
/// (the random re-plan test's edits missed this check when it was removed).
#[test]
fn a_refused_root_release_that_becomes_admissible_is_solved_again() {
    let registry = |yanked: bool| {
        format!(
            "packages:\n- name: gull\n  versions:\n  - {{version: 1.0.0}}\n  - {{version: 2.0.0, yanked: {yanked}}}\n"
        )
    };
    let (warm, stats, cold) = warm_and_cold(
        &registry(true),
        &registry(false),
        &["gull"],
        &PlanOptions::default(),
    );
    assert_eq!(cold.matrix.cells[0].root_version.as_deref(), Some("2.0.0"));
    assert!(to_json(&warm.matrix) == to_json(&cold.matrix));
    assert_eq!(stats.solved, 1);
}

#[test]
fn a_yanked_release_that_stops_suiting_the_image_is_recorded_as_a_cold_solve_would() {
    // app needs lib `*`. lib 3.0.0 and 2.0.0 are yanked but suit the image, so picking a
    // version records them as refused; 1.0.0 is picked. Then lib 2.0.0, still yanked, gains a
    // runtime requirement the image does not meet: a cold solve records it as not suiting
    // instead, so the cell is solved again and the warm cache equals the cold one.
    let registry = |two: &str| {
        format!(
            "packages:
- name: app
  versions:
  - {{version: 1.0.0, depends: [{{name: lib, req: '*'}}]}}
- name: lib
  versions:
  - {{version: 1.0.0}}
  - {{version: 2.0.0, yanked: true{two}}}
  - {{version: 3.0.0, yanked: true}}
"
        )
    };
    let (warm, _, cold) = warm_and_cold(
        &registry(""),
        &registry(", runtime: '>=4'"),
        &["app"],
        &PlanOptions::default(),
    );
    assert!(to_json(&warm.matrix) == to_json(&cold.matrix));
    assert!(
        serde_json::to_string(&warm).unwrap() == serde_json::to_string(&cold).unwrap(),
        "warm cache differs from cold"
    );
}

#[test]
fn a_dependency_of_a_refused_root_release_that_is_published_or_withdrawn_is_solved_again() {
    // app 1.0.0 needs ghost, which the registry lacks; app 2.0.0 needs runtime 4 and later.
    // Whether a newer runtime would install app 2.0.0 (runtime-too-old) or not
    // (missing-from-registry) turns on later alone, which the solver never asked about.
    let registry = |later: &str| {
        format!(
            "packages:
- name: app
  versions:
  - {{version: 1.0.0, depends: [{{name: ghost, req: '*'}}]}}
  - {{version: 2.0.0, runtime: '>=4', depends: [{{name: later, req: '^1'}}]}}
{later}"
        )
    };
    let published = registry("- name: later\n  versions: [{version: 1.0.0}]\n");
    for (before, after, cause) in [
        (registry(""), published.clone(), "runtime-too-old"),
        (published, registry(""), "missing-from-registry"),
    ] {
        let (warm, stats, cold) = warm_and_cold(&before, &after, &["app"], &PlanOptions::default());
        assert_eq!(cold.matrix.cells[0].cause.map(|c| c.as_str()), Some(cause));
        assert!(to_json(&warm.matrix) == to_json(&cold.matrix), "{cause}");
        assert_eq!(stats.solved, 1, "{cause}");
    }
    // The same a level further down: later is published, and its own dependency decides.
    let deeper = |deepest: &str| {
        registry(&format!(
            "- name: later\n  versions: [{{version: 1.0.0, depends: [{{name: deepest, req: '^1'}}]}}]\n{deepest}"
        ))
    };
    let published = deeper("- name: deepest\n  versions: [{version: 1.0.0}]\n");
    for (before, after, cause) in [
        (deeper(""), published.clone(), "runtime-too-old"),
        (published, deeper(""), "missing-from-registry"),
    ] {
        let (warm, stats, cold) = warm_and_cold(&before, &after, &["app"], &PlanOptions::default());
        assert_eq!(cold.matrix.cells[0].cause.map(|c| c.as_str()), Some(cause));
        assert!(
            to_json(&warm.matrix) == to_json(&cold.matrix),
            "deeper {cause}"
        );
        assert_eq!(stats.solved, 1, "deeper {cause}");
    }
}

#[test]
fn a_suiting_release_published_where_the_solver_never_picked_keeps_the_cell() {
    // app 2.0.0 needs alpha `^1` and beta, whose one release needs a newer runtime than the
    // image's: beta has no candidates, so it is decided first, fails, and the solver falls
    // back to app 1.0.0, which needs nothing. alpha was prioritized on `^1` but never picked
    // from. alpha 1.1.0 suits the image and lies in `^1` (Semantic Versioning 2.0.0 caret rule
    // as the semver crate implements it): it only raises a count that decided nothing, so
    // the cell is reused, and its cache reads exactly as a cold plan's.
    let registry = |extra: &str| {
        format!(
            "packages:
- name: app
  versions:
  - {{version: 1.0.0}}
  - {{version: 2.0.0, depends: [{{name: alpha, req: '^1'}}, {{name: beta, req: '*'}}]}}
- name: alpha
  versions:
  - {{version: 1.0.0}}
{extra}- name: beta
  versions:
  - {{version: 1.0.0, runtime: '>=4'}}
"
        )
    };
    let (warm, stats, cold) = warm_and_cold(
        &registry(""),
        &registry("  - {version: 1.1.0}\n"),
        &["app"],
        &PlanOptions::default(),
    );
    assert_eq!((stats.reused, stats.solved), (1, 0));
    assert!(to_json(&cold.matrix).contains("\"root_version\": \"1.0.0\""));
    assert!(
        serde_json::to_string(&warm).unwrap() == serde_json::to_string(&cold).unwrap(),
        "warm cache differs from cold"
    );
}

/// app needs lib `<2` and other `*`. lib 1.0.0 needs other `^1`, lib 0.9.0 needs other `^2`;
/// `lib_tail` follows them. No two releases look alike, so each counts as a candidate.
fn order_sensitive(lib_tail: &str) -> String {
    format!(
        "packages:
- name: app
  versions:
  - {{version: 1.0.0, depends: [{{name: lib, req: '<2'}}, {{name: other, req: '*'}}]}}
- name: lib
  versions:
  - {{version: 0.9.0, depends: [{{name: other, req: '^2'}}]}}
  - {{version: 1.0.0, depends: [{{name: other, req: '^1'}}]}}
{lib_tail}- name: other
  versions:
  - {{version: 1.0.0, runtime: '>=1.0'}}
  - {{version: 2.0.0, runtime: '>=2.0'}}
  - {{version: 2.1.0, runtime: '>=2.1'}}
"
    )
}

#[test]
fn a_candidate_ceiling_that_moves_across_a_range_picked_from_is_solved_again() {
    // lib's candidates in `<2` are its releases there up to its newest one suiting the
    // image. With 1.5.0 and 1.6.0 unsuited and nothing newer suiting, they are 0.9.0 and
    // 1.0.0, fewer than other's three: lib is decided first, at 1.0.0, and other follows at
    // 1.0.0. Once a newer lib release suits the image, the unsuited 1.5.0 and 1.6.0 count
    // too: four candidates, so other is decided first, at 2.1.0, and lib falls back to
    // 0.9.0. No release the solver picked or passed over changes its answer; only the count
    // does, so the cell must be solved again, whichever way the ceiling moves.
    // Each needs a runtime newer than the image's; none looks like another.
    let unsuited = |v: &str| format!("  - {{version: {v}, runtime: '>=4.{}'}}\n", &v[2..3]);
    let old_pair = unsuited("1.5.0") + &unsuited("1.6.0");
    for (before, after, what) in [
        (
            old_pair.clone() + &unsuited("2.0.0"),
            old_pair.clone() + "  - {version: 2.0.0}\n",
            "lib 2.0.0 now suits the image",
        ),
        (
            old_pair.clone() + "  - {version: 2.0.0}\n",
            old_pair.clone() + &unsuited("2.0.0"),
            "lib 2.0.0 no longer suits the image",
        ),
        (
            old_pair.clone() + &unsuited("2.0.0"),
            old_pair.clone() + &unsuited("2.0.0") + "  - {version: 2.1.0}\n",
            "lib 2.1.0 published",
        ),
        (
            String::new(),
            unsuited("1.7.0") + &unsuited("1.8.0") + "  - {version: 2.0.0}\n",
            "lib 1.7.0, 1.8.0 and 2.0.0 published",
        ),
    ] {
        let (before, after) = (order_sensitive(&before), order_sensitive(&after));
        let (cache, _) = replan(
            &small_inputs(&before, &["app"]),
            &PlanOptions::default(),
            None,
            None,
        );
        let (warm, stats, cold) = warm_and_cold(&before, &after, &["app"], &PlanOptions::default());
        let (first, cold_json) = (to_json(&cache.matrix), to_json(&cold.matrix));
        // Decided first, lib is installed at 1.0.0; decided after other, at 0.9.0.
        let lib_first = |json: &str| !json.contains("\"0.9.0\"");
        assert!(
            lib_first(&first) != lib_first(&cold_json),
            "{what}: the order of decisions must change the answer:\n{first}\n{cold_json}"
        );
        assert_eq!(stats.solved, 1, "{what}");
        assert!(to_json(&warm.matrix) == cold_json, "{what}");
    }
}

/// app needs p `*` and z `*`. Every z release needs a w version that does not exist, so app
/// fails on z; the solver decides p first (fewer candidates) and never names it in the
/// failure. `p_releases` lists p's releases.
fn failing_beside(p_releases: &str) -> String {
    beside(
        "  - {version: 1.0.0, depends: [{name: p, req: '*'}, {name: z, req: '*'}]}\n",
        p_releases,
    )
}

/// The registry of [`failing_beside`] with `app_releases` for app's releases.
fn beside(app_releases: &str, p_releases: &str) -> String {
    format!(
        "packages:
- name: app
  versions:
{app_releases}- name: p
  versions:
{p_releases}- name: q
  versions:
  - {{version: 1.0.0}}
  - {{version: 2.0.0, depends: [{{name: w, req: '^9'}}]}}
- name: z
  versions:
  - {{version: 1.0.0, depends: [{{name: w, req: '^5'}}]}}
  - {{version: 1.1.0, depends: [{{name: w, req: '^6'}}]}}
  - {{version: 1.2.0, depends: [{{name: w, req: '^7'}}]}}
  - {{version: 1.3.0, depends: [{{name: w, req: '^8'}}]}}
- name: w
  versions:
  - {{version: 1.0.0}}
"
    )
}

#[test]
fn a_look_alike_of_the_newest_release_keeps_the_cell_and_takes_the_old_ones_place() {
    let p = |tail: &str| {
        format!("  - {{version: 1.0.0, runtime: '>=1'}}\n  - {{version: 1.1.0}}\n{tail}")
    };
    let before = failing_beside(&p(""));
    let options = PlanOptions::default();
    assert!(to_json(&plan(&small_inputs(&before, &["app"]), &options)).contains("\"fails\""));
    // With the newest release yanked too.
    let yanked_newest = |tail: &str| {
        failing_beside(&format!(
            "  - {{version: 1.0.0, runtime: '>=1'}}\n  - {{version: 1.1.0, yanked: true}}\n{tail}"
        ))
    };
    // app 1.1.0 fails as app did above, after p was decided; app 1.0.0 needs nothing and
    // installs alone, leaving p out of the solution.
    let dropped = |tail: &str| {
        beside(
            "  - {version: 1.0.0}\n  - {version: 1.1.0, depends: [{name: p, req: '*'}, {name: z, req: '*'}]}\n",
            &p(tail),
        )
    };
    // app's one release needs p: p is in every solution's closure.
    let needs_p = |tail: &str| {
        beside(
            "  - {version: 1.0.0, depends: [{name: p, req: '*'}]}\n",
            &p(tail),
        )
    };
    let installed = to_json(&plan(&small_inputs(&dropped(""), &["app"]), &options));
    assert!(
        installed.contains("\"root_version\": \"1.0.0\"") && !installed.contains("\"name\": \"p\"")
    );
    let no_closures = PlanOptions {
        closures: false,
        ..PlanOptions::default()
    };
    let one_more = "  - {version: 1.2.0}\n";
    // Registry before and after, entries, options, cells solved again, what the case is.
    type Case<'a> = (
        String,
        String,
        &'a [&'a str],
        &'a PlanOptions,
        usize,
        &'a str,
    );
    let cases: [Case; 10] = [
        // p 1.2.0 declares what 1.1.0 does: a cold solve decides it where it decided 1.1.0,
        // and fails the same way.
        (
            before.clone(),
            failing_beside(&p(one_more)),
            &["app"],
            &options,
            0,
            "look-alike published",
        ),
        // Not a look-alike: it needs q, which the solver must now weigh.
        (
            before.clone(),
            failing_beside(&p("  - {version: 1.2.0, depends: [{name: q, req: '*'}]}\n")),
            &["app"],
            &options,
            1,
            "a release with another dependency",
        ),
        // A yanked look-alike of a yanked newest release is passed over just before it: the
        // walk goes on alike, and the basis lists both as refused.
        (
            yanked_newest(""),
            yanked_newest("  - {version: 1.2.0, yanked: true}\n"),
            &["app"],
            &options,
            0,
            "a yanked look-alike of a yanked newest release",
        ),
        // A yanked look-alike of a newest release that is not is passed over, so the solve
        // walks differently.
        (
            before.clone(),
            failing_beside(&p("  - {version: 1.2.0, yanked: true}\n")),
            &["app"],
            &options,
            1,
            "a yanked look-alike",
        ),
        // p's own cell installs: a cold solve picks 1.2.0 where it picked 1.1.0, and the
        // reused cell names 1.2.0 as its root and in its closure.
        (
            before.clone(),
            failing_beside(&p(one_more)),
            &["app", "p"],
            &options,
            0,
            "an installing cell",
        ),
        // A solution that leaves p out is kept, with or without its closure listed.
        (
            dropped(""),
            dropped(one_more),
            &["app"],
            &options,
            0,
            "p left out",
        ),
        (
            dropped(""),
            dropped(one_more),
            &["app"],
            &no_closures,
            0,
            "p left out, closures not kept",
        ),
        // p in the closure of app's solution, shown with and without the closure listed.
        (
            dropped(""),
            needs_p(one_more),
            &["app"],
            &options,
            1,
            "app now needs p",
        ),
        (
            needs_p(""),
            needs_p(one_more),
            &["app", "p"],
            &options,
            0,
            "p in app's closure",
        ),
        (
            needs_p(""),
            needs_p(one_more),
            &["app", "p"],
            &no_closures,
            0,
            "p in app's closure, closures not kept",
        ),
    ];
    for (before, after, names, options, solved, what) in cases {
        let (warm, stats, cold) = warm_and_cold(&before, &after, names, options);
        assert!(to_json(&warm.matrix) == to_json(&cold.matrix), "{what}");
        // The reused basis must read exactly as the cold solve's, or the next re-plan would
        // check the wrong releases.
        assert!(
            serde_json::to_string(&warm).unwrap() == serde_json::to_string(&cold).unwrap(),
            "{what}: warm cache differs from cold"
        );
        assert_eq!(stats.solved, solved, "{what}");
        // Where the cold answer names p, it names the new release: the reused cell was
        // rewritten, not merely kept.
        let cold_json = to_json(&cold.matrix);
        if cold_json.contains("\"name\": \"p\"") || names.contains(&"p") {
            assert!(
                cold_json.contains("\"1.2.0\"") && !cold_json.contains("\"1.1.0\""),
                "{what}: {cold_json}"
            );
        }
    }
}

#[test]
fn a_look_alike_of_a_newest_release_the_solver_backed_away_from_is_solved_again() {
    // p 1.1.0 needs q `^2`, whose only release needs a w that does not exist: the solver
    // decides p 1.1.0, learns it cannot be used, and picks 1.0.0 from what is left of p's
    // range, which still holds the stretch after 1.1.0. With a look-alike 1.2.0 published,
    // a cold solve decides 1.2.0, backs away, and then tries 1.1.0 before 1.0.0: one step
    // more, and other releases read, though app still fails on z alone.
    let p = |tail: &str| {
        format!(
            "  - {{version: 1.0.0, depends: [{{name: q, req: '^1'}}]}}\n  - {{version: 1.1.0, depends: [{{name: q, req: '^2'}}]}}\n{tail}"
        )
    };
    let before = failing_beside(&p(""));
    let after = failing_beside(&p(
        "  - {version: 1.2.0, depends: [{name: q, req: '^2'}]}\n",
    ));
    let (warm, stats, cold) = warm_and_cold(&before, &after, &["app"], &PlanOptions::default());
    assert!(to_json(&cold.matrix).contains("\"fails\""));
    assert!(
        serde_json::to_string(&warm).unwrap() == serde_json::to_string(&cold).unwrap(),
        "warm cache differs from cold"
    );
    assert_eq!(stats.solved, 1);
}

#[test]
fn releases_that_come_to_look_alike_below_the_ceiling_are_solved_again() {
    // Before, other's three releases differ, so they are three candidates against lib's two:
    // lib is decided first, at 1.0.0, and other follows at 1.0.0. Once 2.0.0 and 2.1.0
    // declare what 1.0.0 declares, the three count once: other is decided first, at 2.1.0,
    // and lib falls back to 0.9.0. The solve never read either release, only their count.
    let before = order_sensitive("");
    let after = before
        .replace("2.0.0, runtime: '>=2.0'", "2.0.0, runtime: '>=1.0'")
        .replace("2.1.0, runtime: '>=2.1'", "2.1.0, runtime: '>=1.0'");
    assert_ne!(before, after);
    let (warm, stats, cold) = warm_and_cold(&before, &after, &["app"], &PlanOptions::default());
    let first = plan(&small_inputs(&before, &["app"]), &PlanOptions::default());
    let lib_first = |json: &str| !json.contains("\"0.9.0\"");
    assert!(lib_first(&to_json(&first)) && !lib_first(&to_json(&cold.matrix)));
    assert_eq!(stats.solved, 1);
    assert!(to_json(&warm.matrix) == to_json(&cold.matrix));
}

#[test]
fn a_merged_run_at_the_ceiling_that_splits_up_is_solved_again() {
    // lib 1.0.0 to 1.0.2 look alike and end at lib's ceiling, so `<2` offers two candidates
    // (0.9.0 and the run) against other's three: lib is decided first, at 1.0.2. Once lib
    // 2.0.0 suits the image and looks like none of them, the run no longer ends at the
    // ceiling and counts three times: other goes first, at 2.1.0, and lib falls back to
    // 0.9.0, though the range picked from gained no release.
    let alike = "  - {version: 1.0.1, depends: [{name: other, req: '^1'}]}\n  - {version: 1.0.2, depends: [{name: other, req: '^1'}]}\n";
    let before = order_sensitive(alike);
    for (after, what) in [
        (
            order_sensitive(&format!("{alike}  - {{version: 2.0.0}}\n")),
            "lib 2.0.0 published",
        ),
        (
            // Present but empty native hints make a release look like no other.
            order_sensitive(&alike.replacen("}]}", "}], native: {}}", 1)),
            "empty native hints on lib 1.0.1",
        ),
    ] {
        assert_ne!(before, after);
        let (warm, stats, cold) = warm_and_cold(&before, &after, &["app"], &PlanOptions::default());
        let first = plan(&small_inputs(&before, &["app"]), &PlanOptions::default());
        let lib_first = |json: &str| !json.contains("\"0.9.0\"");
        assert!(
            lib_first(&to_json(&first)) && !lib_first(&to_json(&cold.matrix)),
            "{what}: the order of decisions must change the answer"
        );
        assert_eq!(stats.solved, 1, "{what}");
        assert!(to_json(&warm.matrix) == to_json(&cold.matrix), "{what}");
    }
}

#[test]
fn requirements_written_differently_but_read_alike_keep_releases_alike() {
    // `'^1 '` reads as `^1` and an empty requirement as `*`: lib 1.0.2 still looks like
    // 1.0.1, so the counts, the answer and the cache stay those of a cold plan. Were the two
    // told apart, the run at lib's ceiling would split up unseen, as in
    // `a_merged_run_at_the_ceiling_that_splits_up_is_solved_again`.
    let w = "- name: w\n  versions:\n  - {version: 1.0.0}\n";
    let release = |v: &str, other: &str, w: &str| {
        format!(
            "  - {{version: {v}, depends: [{{name: other, req: '{other}'}}, {{name: w, req: '{w}'}}]}}\n"
        )
    };
    let with = |second_other: &str, second_w: &str| {
        order_sensitive(&(release("1.0.1", "^1", "*") + &release("1.0.2", second_other, second_w)))
            + w
    };
    let before = with("^1", "*");
    for after in [with("^1 ", "*"), with("^1", "")] {
        let (warm, _, cold) = warm_and_cold(&before, &after, &["app"], &PlanOptions::default());
        assert!(to_json(&warm.matrix) == to_json(&cold.matrix), "{after}");
        assert!(
            serde_json::to_string(&warm).unwrap() == serde_json::to_string(&cold).unwrap(),
            "{after}: warm cache differs from cold"
        );
    }
}

/// `app` 1.0.0 depends on `lib ^1`; `lib` has one release, yanked or not.
fn app_lib(lib_yanked: bool) -> String {
    format!(
        "packages:\n- name: app\n  versions:\n  - {{version: 1.0.0, depends: [{{name: lib, req: '^1'}}]}}\n- name: lib\n  versions: [{{version: 1.0.0, yanked: {lib_yanked}}}]\n"
    )
}

fn cache_json(cache: &PlanCache) -> String {
    serde_json::to_string(cache).unwrap()
}

/// A warm re-plan's matrix and cache are a cold plan's, byte for byte; `what` names the case.
fn assert_warm_is_cold(warm: &PlanCache, cold: &PlanCache, what: &str) {
    assert!(
        to_json(&warm.matrix) == to_json(&cold.matrix),
        "{what}: warm matrix differs: {:?}",
        warm.matrix.cells
    );
    assert!(
        cache_json(warm) == cache_json(cold),
        "{what}: warm cache differs"
    );
}

#[test]
fn a_package_table_out_of_name_order_is_not_trusted() {
    // A repeated entry shifts every later table index by one, so a basis would point at the
    // wrong packages and miss that lib was yanked.
    let options = PlanOptions::default();
    let before = small_inputs(&app_lib(false), &["app"]);
    let (mut c, _) = replan(&before, &options, None, None);
    let repeated = c.packages[0].clone();
    c.packages.insert(0, repeated);
    assert!(c.check().is_err());
    let after = small_inputs(&app_lib(true), &["app"]);
    let cold = to_json(&plan(&after, &options));
    assert!(
        cold != to_json(&plan(&before, &options)),
        "the yank must matter"
    );
    let (warm, stats) = replan(&after, &options, Some(c), None);
    assert!(to_json(&warm.matrix) == cold);
    assert_eq!(stats.reused, 0);
}

#[test]
fn stray_or_unordered_basis_lists_are_not_carried_over() {
    let options = PlanOptions::default();
    let inputs = small_inputs(&app_lib(false), &["app", "absent"]);
    let (cache, _) = replan(&inputs, &options, None, None);
    let cold = cache_json(&cache);
    // Lengths on the cell of a name the registry lacks, which observed nothing.
    let mut stray = cache.clone();
    let absent = stray
        .matrix
        .cells
        .iter()
        .position(|x| x.package == "absent");
    stray.bases[absent.unwrap()].lengths = vec![5];
    // The packages of app's cell, with their runs, listed in the other order.
    let mut unordered = cache.clone();
    let b = &mut unordered.bases[0];
    assert_eq!(b.packages.len(), 2);
    let first = b.lengths[0] as usize;
    b.observed.rotate_left(first);
    b.packages.reverse();
    b.lengths.reverse();
    for damaged in [stray, unordered] {
        assert!(damaged.check().is_err());
        let (warm, stats) = replan(&inputs, &options, Some(damaged), None);
        assert_eq!(stats.solved, 1);
        assert!(cache_json(&warm) == cold);
    }
}

/// A failing cell's explanation names every dependency its release cannot meet, also those
/// the solver never reached: one that becomes unusable, or usable again, must send the cell
/// back to the solver, or the kept explanation would differ from a cold plan's.
#[test]
fn a_dependency_turning_unusable_beside_the_one_met_first_is_noticed() {
    let registry = |second: &str| {
        format!(
            "packages:
- name: app
  versions:
  - {{version: 1.0.0, depends: [{{name: first, req: '*'}}, {{name: second, req: '*'}}]}}
  - {{version: 0.9.0, depends: [{{name: first, req: '*'}}, {{name: second, req: '*'}}]}}
- name: first
  versions: [{{version: 1.0.0, runtime: '>=9'}}, {{version: 1.1.0, runtime: '>=9'}}]
{second}"
        )
    };
    let usable = "- name: second\n  versions: [{version: 1.0.0}, {version: 2.0.0}]\n";
    let too_new = "- name: second\n  versions: [{version: 1.0.0, runtime: '>=8'}, {version: 2.0.0, runtime: '>=8'}]\n";
    let yanked = "- name: second\n  versions: [{version: 1.0.0, yanked: true}, {version: 2.0.0, yanked: true}]\n";
    let missing = "";
    for (before, after) in [
        (usable, too_new),
        (too_new, usable),
        (usable, yanked),
        (yanked, usable),
        (usable, missing),
        (missing, usable),
    ] {
        let (warm, _, cold) = warm_and_cold(
            &registry(before),
            &registry(after),
            &["app"],
            &PlanOptions::default(),
        );
        let (warm, cold) = (to_json(&warm.matrix), to_json(&cold.matrix));
        assert!(warm == cold, "{before} -> {after}:\n{warm}\n{cold}");
    }
}

/// A plan that keeps no cache (`plan`, and `basefit plan` without `--cache`) drops each
/// cell's solve record at once; its matrix must be the one a cache-keeping plan writes, for the
/// whole plan and for a shard.
#[test]
fn a_plan_without_a_cache_gives_the_same_matrix() {
    use basefit::plan::replan::plan_uncached;
    let inputs = demo();
    let options = PlanOptions::default();
    for shard in [None, Shard::parse("2/3").ok()] {
        let (kept, _) = replan(&inputs, &options, None, shard);
        let (bare, stats) = plan_uncached(&inputs, &options, shard);
        assert_eq!(
            basefit::report::to_json(&bare.matrix),
            basefit::report::to_json(&kept.matrix)
        );
        assert!(bare.bases.is_empty() && bare.packages.is_empty());
        assert_eq!(stats.solved, kept.matrix.cells.len());
    }
}

/// A release published inside `^1` that does not suit the image (it needs a newer runtime)
/// is passed over, so the cell is reused, not solved again, and reads as a cold plan's.
#[test]
fn a_new_release_at_the_ceiling_that_does_not_suit_keeps_the_cell() {
    let registry = |extra: &str| {
        format!(
            "packages:\n- name: app\n  versions:\n  - version: 1.0.0\n    depends: [{{name: lib, req: '^1'}}]\n- name: lib\n  versions:\n  - {{version: 1.0.0}}\n{extra}"
        )
    };
    let (warm, stats, cold) = warm_and_cold(
        &registry(""),
        &registry("  - {version: 1.1.0, runtime: '>=4'}\n"),
        &["app"],
        &PlanOptions::default(),
    );
    assert_eq!((stats.reused, stats.solved), (1, 0), "{stats:?}");
    assert!(to_json(&warm.matrix) == to_json(&cold.matrix));
}

/// The demo registry's fingerprint, pinned: a matrix records it, and `review`/`render` refuse
/// a registry whose fingerprint differs. A change to how it is made (the hasher, or how a
/// registry file reads into releases) must come with a new
/// `REGISTRY_FINGERPRINT_FORMAT`, or every matrix written before is refused against an
/// unchanged registry (a review found exactly that after the hasher changed). When this
/// test fails for such a change, bump the format and the expected value together.
#[test]
fn the_demo_registry_fingerprint_is_pinned_to_its_format() {
    let fingerprint = basefit::plan::replan::registry_fingerprint(&demo().registry);
    assert_eq!(fingerprint, "r3-a6138e593df7de12");
    assert!(fingerprint.starts_with(basefit::plan::replan::REGISTRY_FINGERPRINT_FORMAT));
}

/// app needs lib `*`; the image runs 3.0.0. lib 3.0.0 is yanked (refused while suiting),
/// 2.0.0 needs runtime `>=4` (passed over for not suiting), so 1.0.0 is picked. When 2.0.0
/// asks for `>=3` instead, a cold solve picks it: the cached cell must not be reused on the
/// strength of 1.0.0 and 3.0.0 answering as before (the passed-over release must still not
/// suit). Each release has its own runtime requirement, so no two look alike before or
/// after and the ceiling (3.0.0) stays: only that check sees the change.
#[test]
fn a_passed_over_release_that_comes_to_suit_the_image_is_solved_again() {
    let registry = |two: &str| {
        format!(
            "packages:
- name: app
  versions:
  - {{version: 1.0.0, depends: [{{name: lib, req: '*'}}]}}
- name: lib
  versions:
  - {{version: 1.0.0, runtime: '>=1'}}
  - {{version: 2.0.0, runtime: '{two}'}}
  - {{version: 3.0.0, yanked: true, runtime: '>=2'}}
"
        )
    };
    let (warm, stats, cold) = warm_and_cold(
        &registry(">=4"),
        &registry(">=3"),
        &["app"],
        &PlanOptions::default(),
    );
    let lib = cold.matrix.cells[0]
        .closure
        .iter()
        .find(|p| p.name == "lib");
    assert_eq!(
        lib.map(|p| p.version.as_str()),
        Some("2.0.0"),
        "{:?}",
        cold.matrix.cells[0]
    );
    assert_eq!(stats.solved, 1);
    assert_warm_is_cold(&warm, &cold, "");
}

/// lib 2.0.0 is yanked but suits the image, so the solve records it as refused while
/// suiting. It then gains a runtime requirement the image does not meet, still yanked: a
/// cold solve records it as not suiting (which also changes candidate counts, as a release
/// the image can never use does not count), so the cell must be solved again and the warm
/// cache equal the cold one. No release looks like its neighbours before or after (each
/// has its own runtime requirement), so only the check that refused releases still suit
/// the image sees the change.
#[test]
fn a_refused_release_that_stops_suiting_among_unlike_neighbours_is_solved_again() {
    let registry = |two: &str| {
        format!(
            "packages:
- name: app
  versions:
  - {{version: 1.0.0, depends: [{{name: lib, req: '*'}}]}}
- name: lib
  versions:
  - {{version: 1.0.0, runtime: '>=1'}}
  - {{version: 2.0.0, yanked: true{two}}}
  - {{version: 3.0.0, yanked: true, runtime: '>=2'}}
"
        )
    };
    let (warm, stats, cold) = warm_and_cold(
        &registry(""),
        &registry(", runtime: '>=4'"),
        &["app"],
        &PlanOptions::default(),
    );
    assert_eq!(stats.solved, 1, "{stats:?}");
    assert_warm_is_cold(&warm, &cold, "");
}

/// A package's summary is read by the native step (a catalog library it mentions is a
/// possible need), so a package whose own fields changed is not one whose listing stayed the
/// same: its cells are solved again even though every release answers as before, and the
/// warm plan names the need the cold one does.
#[test]
fn a_changed_summary_is_read_again_by_the_native_step() {
    let registry = |summary: &str| {
        format!(
            "packages:\n- name: parser\n  summary: {summary}\n  versions: [{{version: 1.0.0}}]\n"
        )
    };
    let before = registry("draws thumbnails of its trees");
    let after = registry("draws libpng thumbnails of its trees");
    let options = PlanOptions::default();
    let (warm, stats, cold) = warm_and_cold(&before, &after, &["parser"], &options);
    let first = plan(&small_inputs(&before, &["parser"]), &options);
    assert!(
        to_json(&cold.matrix) != to_json(&first),
        "the summary must matter: {:?}",
        cold.matrix.cells[0]
    );
    assert_eq!(stats.solved, 1, "{stats:?}");
    assert_warm_is_cold(&warm, &cold, "");
}

/// A look-alike stands in for the old newest release only when it is published just after
/// it. Here `*` admits lib 1.0.0 but not 2.0.0-rc.1 (a pre-release, Semantic Versioning
/// 2.0.0 section 9, which the semver crate's `*` leaves out), and lib 2.0.0, published
/// after both and declaring what 1.0.0 does, lies in exactly the sets 1.0.0 lies in. It does
/// not sit next to 1.0.0, so the cell is solved again: a cold solve picks 2.0.0, and a kept
/// cell would name the release after 1.0.0 (the pre-release) in its place.
#[test]
fn a_look_alike_that_is_not_next_to_the_release_it_matches_is_solved_again() {
    let registry = |extra: &str| {
        format!(
            "packages:
- name: app
  versions:
  - {{version: 1.0.0, depends: [{{name: lib, req: '*'}}]}}
- name: lib
  versions:
  - {{version: 1.0.0}}
  - {{version: 2.0.0-rc.1}}
{extra}"
        )
    };
    let (warm, stats, cold) = warm_and_cold(
        &registry(""),
        &registry("  - {version: 2.0.0}\n"),
        &["app"],
        &PlanOptions::default(),
    );
    let lib = cold.matrix.cells[0]
        .closure
        .iter()
        .find(|p| p.name == "lib");
    assert_eq!(lib.map(|p| p.version.as_str()), Some("2.0.0"));
    assert_eq!(stats.solved, 1, "{stats:?}");
    assert_warm_is_cold(&warm, &cold, "");
}

/// A cell is found again by its package and image, but a priority entry that now pins the
/// package (`lib ^1` where it named `lib` alone) or lets pre-releases in asks another
/// question of the same registry: the cell is solved again and reads as a cold plan's.
#[test]
fn a_priority_entry_whose_requirement_changed_is_solved_again() {
    let text = "packages:\n- name: lib\n  versions: [{version: 1.0.0}, {version: 2.0.0}, {version: 3.0.0-rc.1}]\n";
    let options = PlanOptions::default();
    let before = small_inputs(text, &["lib"]);
    let (cache, _) = replan(&before, &options, None, None);
    assert_eq!(cache.matrix.cells[0].root_version.as_deref(), Some("2.0.0"));
    let pinned = {
        let mut inputs = small_inputs(text, &["lib"]);
        inputs.priorities.entries[0].req = Some(basefit::model::Requirement::parse("^1").unwrap());
        inputs
    };
    let prerelease = {
        let mut inputs = small_inputs(text, &["lib"]);
        inputs.priorities.entries[0].prerelease = true;
        inputs
    };
    for (after, expected) in [(pinned, "1.0.0"), (prerelease, "3.0.0-rc.1")] {
        let (cold, _) = replan(&after, &options, None, None);
        assert_eq!(cold.matrix.cells[0].root_version.as_deref(), Some(expected));
        let (warm, stats) = replan(&after, &options, Some(cache.clone()), None);
        assert_eq!(stats.solved, 1, "{expected}: {stats:?}");
        assert_warm_is_cold(&warm, &cold, expected);
    }
}

#[test]
fn a_package_only_an_explanation_read_stays_in_the_table_of_a_reused_cell() {
    // app 2.0.0 needs a newer runtime than the image's, so the solver never reads its
    // dependencies; app 1.0.0 needs a package the registry lacks, and the explanation walks
    // app 2.0.0's dependencies (later) to choose the cause. Re-planned with
    // nothing changed, the reused cell's basis still names later as a package that must be
    // unchanged: the new table must hold it, or the warm cache differs from a cold one and
    // the next re-plan cannot judge the cell.
    let registry = "packages:
- name: app
  versions:
  - {version: 1.0.0, depends: [{name: ghost, req: '*'}]}
  - {version: 2.0.0, runtime: '>=4', depends: [{name: later, req: '^1'}]}
- name: later
  versions: [{version: 1.0.0}]
";
    let (warm, stats, cold) = warm_and_cold(registry, registry, &["app"], &PlanOptions::default());
    assert_eq!(stats.reused, 1);
    assert!(
        cold.packages.iter().any(|p| p.name == "later"),
        "{:?}",
        cold.packages
    );
    assert_warm_is_cold(&warm, &cold, "nothing changed");
    assert!(warm.check().is_ok());
    let (_, stats) = replan(
        &small_inputs(registry, &["app"]),
        &PlanOptions::default(),
        Some(warm),
        None,
    );
    assert_eq!(stats.reused, 1);
}

#[test]
fn a_release_published_inside_a_pre_release_entry_is_seen() {
    // The entry allows pre-releases, so its requirement admits 2.0.0-beta.2 while a
    // requirement without the flag admits no pre-release (Semantic Versioning 2.0.0 section
    // 9, as the semver crate matches it). beta.2 declares what beta.1 declares, so it stands
    // in for it: the cell is kept and names beta.2. One that needs another package is solved
    // again.
    let registry = |beta2: &str| {
        format!(
            "packages:
- name: lib
  versions:
  - {{version: 1.0.0}}
  - {{version: 2.0.0-beta.1}}
{beta2}- name: helper
  versions: [{{version: 1.0.0}}]
"
        )
    };
    let with_flag = |text: &str| {
        let mut inputs = small_inputs(text, &["lib"]);
        inputs.priorities.entries[0].prerelease = true;
        inputs
    };
    let options = PlanOptions::default();
    for (beta2, solved) in [
        ("  - {version: 2.0.0-beta.2}\n", 0),
        (
            "  - {version: 2.0.0-beta.2, depends: [{name: helper, req: '^1'}]}\n",
            1,
        ),
    ] {
        let (cache, _) = replan(&with_flag(&registry("")), &options, None, None);
        assert_eq!(
            cache.matrix.cells[0].root_version.as_deref(),
            Some("2.0.0-beta.1")
        );
        let after = with_flag(&registry(beta2));
        let (warm, stats) = replan(&after, &options, Some(cache), None);
        let (cold, _) = replan(&after, &options, None, None);
        assert_eq!(
            cold.matrix.cells[0].root_version.as_deref(),
            Some("2.0.0-beta.2")
        );
        assert_eq!(stats.solved, solved, "{beta2}");
        assert_warm_is_cold(&warm, &cold, beta2);
    }
}

#[test]
fn a_range_asked_past_the_last_release_sees_a_release_published_after_it() {
    // pubgrub asks with ranges built from requirement sets, which end at the last release,
    // so no real solve records an open-ended range; the record is kept in case it ever does.
    // Marked by hand here: lib 3.0.0, outside `^1` and otherwise kept past
    // (`a_release_published_outside_every_requirement_seen_keeps_the_cell`), would fall in
    // such a range, so the cell must be solved again.
    let registry = |versions: &str| {
        format!(
            "packages:\n- name: app\n  versions:\n  - {{version: 1.0.0, depends: [{{name: lib, req: '^1'}}]}}\n- name: lib\n  versions: [{versions}]\n"
        )
    };
    let options = PlanOptions::default();
    let before = registry("{version: 1.0.0}, {version: 2.0.0}");
    let (mut cache, _) = replan(&small_inputs(&before, &["app"]), &options, None, None);
    let lib = cache.packages.iter().position(|p| p.name == "lib").unwrap() as u32;
    assert!(cache.bases[0].open_ended.is_empty());
    cache.bases[0].open_ended.push(lib);
    assert!(cache.check().is_ok());
    let after = small_inputs(
        &registry("{version: 1.0.0}, {version: 2.0.0}, {version: 3.0.0}"),
        &["app"],
    );
    let (_, stats) = replan(&after, &options, Some(cache), None);
    assert_eq!(stats.solved, 1);
}

#[test]
fn merging_refuses_shards_missing_the_last_cells_of_the_matrix() {
    // A shard cut short at its end leaves no gap among the positions the parts hold: only the
    // count of cells tells the merged matrix would be short.
    let inputs = demo();
    let options = PlanOptions::default();
    let count = 3;
    let mut parts: Vec<Matrix> = (1..=count)
        .map(|index| {
            replan(&inputs, &options, None, Some(Shard { index, count }))
                .0
                .matrix
        })
        .collect();
    let total: usize = parts.iter().map(|p| p.cells.len()).sum();
    let last = (total - 1) % count;
    let dropped = parts[last].cells.pop().unwrap();
    let err = merge_shards(parts).unwrap_err();
    assert_eq!(err.part, Some(last), "{}", err.message);
    assert!(
        err.message
            .contains(&format!("lacks its cell for {}", dropped.package)),
        "{}",
        err.message
    );
}

#[test]
fn merging_refuses_shards_planned_from_other_entry_requirements() {
    // The matrix rows show an entry's name, rank, weight and summary, not its requirement or
    // pre-release flag: only what the shard records it was planned from tells these apart.
    let inputs = demo();
    let mut flagged = demo();
    flagged.priorities.entries[0].prerelease = !flagged.priorities.entries[0].prerelease;
    let options = PlanOptions::default();
    let shard = |inputs: &Inputs, index| {
        replan(inputs, &options, None, Some(Shard { index, count: 2 }))
            .0
            .matrix
    };
    let (one, two) = (shard(&inputs, 1), shard(&flagged, 2));
    assert!(one.packages == two.packages && one.images == two.images);
    let err = merge_shards(vec![one, two]).unwrap_err();
    assert!(
        err.message.contains("planned from other inputs"),
        "{}",
        err.message
    );
}

#[test]
fn a_seal_written_otherwise_than_as_sixteen_hex_digits_does_not_hold() {
    // `u64::from_str_radix` takes a leading `+` (Rust's documentation of `from_str_radix`),
    // so the same value can be written in 17 characters.
    let (cache, _) = replan(&demo(), &PlanOptions::default(), None, None);
    let text = cache.to_sealed_json();
    assert!(PlanCache::seal_holds(&text));
    let at = text.rfind(",\"seal\":\"").unwrap() + ",\"seal\":\"".len();
    let plus = format!("{}+{}", &text[..at], &text[at..]);
    assert!(!PlanCache::seal_holds(&plus));
}

#[test]
fn the_last_two_releases_below_the_ceiling_coming_to_look_alike_are_solved_again() {
    // lib 1.1.0 gives lib three candidates in `<2`, as many as other's three releases: lib is
    // decided first (the tie goes its way), at 1.1.0, and other follows at 1.0.0. Once other
    // 2.1.0 declares what 2.0.0 declares, the two, the last below other's ceiling, count
    // once: other has two candidates, is decided first, at 2.1.0, and lib falls back to
    // 0.9.0. No release the solve read changed.
    let before = order_sensitive("  - {version: 1.1.0, depends: [{name: other, req: '~1.0'}]}\n");
    let after = before.replace("2.1.0, runtime: '>=2.1'", "2.1.0, runtime: '>=2.0'");
    assert_ne!(before, after);
    let (warm, stats, cold) = warm_and_cold(&before, &after, &["app"], &PlanOptions::default());
    let first = plan(&small_inputs(&before, &["app"]), &PlanOptions::default());
    let lib_first = |json: &str| !json.contains("\"0.9.0\"");
    assert!(lib_first(&to_json(&first)) && !lib_first(&to_json(&cold.matrix)));
    assert_eq!(stats.solved, 1);
    assert_warm_is_cold(&warm, &cold, "other 2.1.0 comes to look like 2.0.0");
}

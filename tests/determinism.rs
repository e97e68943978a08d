//! The same inputs give byte-identical output at any thread count.

mod common;

use basefit::plan::{PlanOptions, plan};
use basefit::report::to_json;

#[test]
fn plan_is_byte_identical_at_one_and_many_threads() {
    let inputs = common::demo_inputs(Vec::new());
    let run = |threads: usize| {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap();
        pool.install(|| to_json(&plan(&inputs, &PlanOptions::default())))
    };
    let one = run(1);
    for n in [2, 4, 8] {
        assert!(one == run(n), "output differs at {n} threads");
    }
    assert!(one.contains("\"cells\""));
}

#[test]
fn plan_cache_and_warm_replan_are_byte_identical_at_one_and_many_threads() {
    use basefit::plan::replan::replan;
    let mut inputs = common::demo_inputs(Vec::new());
    let options = PlanOptions::default();
    let (first, _) = replan(&inputs, &options, None, None);
    // One yank so that the warm re-plan both reuses and solves.
    let id = inputs.registry.id("wattle-core").unwrap();
    if let Some(r) = inputs.registry.package_mut(id).releases.last_mut() {
        r.yanked = !r.yanked;
    }
    let run = |threads: usize| {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap();
        pool.install(|| {
            let (cache, stats) = replan(&inputs, &options, Some(first.clone()), None);
            assert!(stats.reused > 0 && stats.solved > 0, "{stats:?}");
            serde_json::to_string(&cache).unwrap()
        })
    };
    let one = run(1);
    for n in [2, 4, 8] {
        assert!(one == run(n), "plan cache differs at {n} threads");
    }
}

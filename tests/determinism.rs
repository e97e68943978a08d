//! The same inputs give byte-identical output at any thread count.

use basefit::load::{InputPaths, load_inputs};
use basefit::plan::{PlanOptions, plan};
use basefit::report::to_json;

#[test]
fn plan_is_byte_identical_at_one_and_many_threads() {
    let inputs = load_inputs(&InputPaths {
        registry: vec!["demo-data/registry.yaml".into()],
        images: Some("matrices/demo-images.yaml".into()),
        priorities: Some("demo-data/priorities.yaml".into()),
        ..Default::default()
    })
    .unwrap();
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

//! Example graphs evaluated through the real, dynamically loaded plugins.

use heft_integration_tests::{read_csv, registry, workspace_root};
use heft_runtime::check::Overrides;
use heft_runtime::{check, eval, read_graph};

#[test]
fn toss_graph_evaluates() {
    let reg = registry();
    let (graph, problems) = read_graph(&workspace_root().join("graphs/toss.graph")).expect("readable");
    let plan = check::check(&graph, problems, &reg, &Overrides::default()).expect("the example checks");
    let e = eval::evaluate(&plan, Some(2)).expect("evaluates");
    assert_eq!(e.values.len(), 2);
    let _ = read_csv;
}

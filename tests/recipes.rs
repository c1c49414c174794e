//! Recipes: graph files included by others, instantiated per character with overrides, and
//! the problems that name both ends.

use std::path::Path;

use heft_integration_tests::registry;
use heft_node_sdk::ParamValue;
use heft_runtime::check::{Overrides, Plan, check};
use heft_runtime::diag::Problem;
use heft_runtime::read_graph;

/// A recipe: a keyed path, a jump and its apparent weight.
const RECIPE: &str = "format 1\n# a reusable piece\npath = trajectory.keyed\n    key = 0 s: (0, 0, 1) m\n    key = 1 s: (0, 0, 1.2) m\nweigh = weight.apparent\n    mass = 60 kg\njump = trajectory.jump\n    takeoff_frame = 2\njump.com_acceleration -> weigh.com_acceleration\njump.contact -> weigh.contact\nwrite weigh.force\n";

fn plan(dir: &Path, files: &[(&str, &str)], main: &str) -> Result<Plan, Vec<Problem>> {
    for (name, text) in files {
        let path = dir.join(name);
        if let Some(parent) = path.parent() {
            std::fs::create_dir_all(parent).expect("mkdir");
        }
        std::fs::write(path, text).expect("write");
    }
    let graph = dir.join("main.graph");
    std::fs::write(&graph, format!("format 1\nrate 24 fps\nframes 0..4\n{main}")).expect("write");
    let (g, p) = read_graph(&graph).expect("readable");
    check(&g, p, &registry(), &Overrides::default())
}

fn located(p: &[Problem], dir: &Path) -> Vec<String> {
    let prefix = format!("{}/", dir.display());
    p.iter()
        .map(|p| {
            format!(
                "{}: {}",
                p.location().replace(&prefix, ""),
                p.message.replace(&prefix, "")
            )
        })
        .collect()
}

#[test]
fn a_recipe_is_instantiated_twice_with_its_own_overrides() {
    let dir = tempfile::tempdir().expect("temp dir");
    let main = "contact = trajectory.ballistic\n\
include \"recipes/weigh.graph\" as odile\n    weigh.mass = 58 kg\n\
include \"recipes/weigh.graph\" as pim\n    weigh.mass = 81 kg\n    path.key = 0 s: (0, 0, 0.9) m\n    path.key = 2 s: (0, 0, 1.1) m\n";
    let plan = plan(dir.path(), &[("recipes/weigh.graph", RECIPE)], main).expect("checks");
    let names: Vec<&str> = plan.nodes.iter().map(|n| n.name.as_str()).collect();
    assert_eq!(
        names,
        [
            "contact",
            "odile_path",
            "odile_weigh",
            "odile_jump",
            "pim_path",
            "pim_weigh",
            "pim_jump"
        ]
    );
    let mass = |node: &str| {
        let n = plan.nodes.iter().find(|n| n.name == node).expect("node");
        n.params[n.ty.spec().params.iter().position(|p| p.name == "mass").expect("mass")].clone()
    };
    assert_eq!(mass("odile_weigh"), ParamValue::Number(58.0));
    assert_eq!(mass("pim_weigh"), ParamValue::Number(81.0));
    // Overriding key lines replace the recipe's list.
    let pim_path = plan.nodes.iter().find(|n| n.name == "pim_path").expect("node");
    assert_eq!(
        pim_path.params[0],
        ParamValue::Keys(vec![(0.0, [0.0, 0.0, 0.9]), (2.0, [0.0, 0.0, 1.1])])
    );
    // Outputs are renamed per instance.
    let stems: Vec<&str> = plan.writes.iter().map(|w| w.stem.as_str()).collect();
    assert_eq!(stems, ["odile_weigh.force", "pim_weigh.force"]);
    // The recipe's wires join its own instance's nodes.
    let weigh = plan.nodes.iter().position(|n| n.name == "pim_weigh").expect("node");
    assert_eq!(plan.nodes[weigh].inputs[0], Some((6, 2)));
}

#[test]
fn a_missing_recipe_and_an_unknown_override_are_reported_in_place() {
    let dir = tempfile::tempdir().expect("temp dir");
    let main = "include \"recipes/nowhere.graph\" as a\ninclude \"recipes/weigh.graph\" as b\n    wiegh.mass = 58 kg\n";
    let p = plan(dir.path(), &[("recipes/weigh.graph", RECIPE)], main).expect_err("problems");
    let got = located(&p, dir.path());
    assert!(
        got[0].starts_with("main.graph:4:9: cannot read the recipe recipes/nowhere.graph"),
        "{got:?}"
    );
    assert!(
        got[1].starts_with("main.graph:6:5: the recipe recipes/weigh.graph has no node `wiegh`"),
        "{got:?}"
    );
    assert_eq!(p.len(), 2, "{got:?}");
}

#[test]
fn an_include_cycle_names_both_ends() {
    let dir = tempfile::tempdir().expect("temp dir");
    let a = "format 1\ninclude \"b.graph\" as inner\n";
    let b = "format 1\n\ninclude \"a.graph\" as back\n";
    let p = plan(
        dir.path(),
        &[("r/a.graph", a), ("r/b.graph", b)],
        "include \"r/a.graph\" as outer\n",
    )
    .expect_err("cycle");
    let got = located(&p, dir.path());
    assert_eq!(
        got,
        ["r/b.graph:3:9: including r/a.graph here makes a cycle of includes"],
        "{got:?}"
    );
    let related: Vec<String> = p[0]
        .related
        .iter()
        .map(|(pl, l)| {
            format!(
                "{} {l}",
                pl.location().replace(&format!("{}/", dir.path().display()), "")
            )
        })
        .collect();
    assert_eq!(related, ["main.graph:4:9 it is first included here"]);
}

#[test]
fn a_name_clash_and_a_recipe_problem_point_into_both_files() {
    let dir = tempfile::tempdir().expect("temp dir");
    let bad = RECIPE.replace("mass = 60 kg", "mass = 60 m");
    let main = "odile_path = trajectory.ballistic\ninclude \"recipes/weigh.graph\" as odile\n";
    let p = plan(dir.path(), &[("recipes/weigh.graph", &bad)], main).expect_err("problems");
    let got = located(&p, dir.path());
    assert!(
        got.contains(&"recipes/weigh.graph:3:1: a node named `odile_path` is declared twice".to_owned()),
        "{got:?}"
    );
    assert!(
        got.contains(&"recipes/weigh.graph:7:15: `m` is a length, but `mass` is a mass".to_owned()),
        "{got:?}"
    );
    let clash = p.iter().find(|p| p.message.contains("declared twice")).expect("clash");
    assert_eq!(
        clash.related[0].0.location(),
        format!("{}:4:1", dir.path().join("main.graph").display())
    );
}

/// A chain of 10 000 recipes, each including the next (which once overflowed the stack), stops
/// at the 64th level with a problem at the include that goes one level too deep.
#[test]
fn a_chain_of_recipes_too_deep_is_refused_at_its_place() {
    let dir = tempfile::tempdir().expect("temp dir");
    let files: Vec<(String, String)> = (0..10_000)
        .map(|i| {
            (
                format!("r{i}.graph"),
                format!("format 1\ninclude \"r{}.graph\" as n\n", i + 1),
            )
        })
        .collect();
    let files: Vec<(&str, &str)> = files.iter().map(|(a, b)| (a.as_str(), b.as_str())).collect();
    let p = plan(dir.path(), &files, "include \"r0.graph\" as top\n").expect_err("too deep");
    let at = located(&p, dir.path());
    assert_eq!(at.len(), 1, "{at:?}");
    assert!(
        at[0].starts_with("r63.graph:2:9: including") && at[0].ends_with("makes recipes nested more than 64 deep"),
        "{at:?}"
    );
}

/// A recipe's `node.param` names its own nodes: each instance takes its own node's value, and
/// an override of that value reaches both.
#[test]
fn a_recipe_s_references_name_its_own_nodes() {
    let dir = tempfile::tempdir().expect("temp dir");
    let recipe = "format 1\njump = trajectory.jump\n    body_mass = 60 kg\n    takeoff_frame = 2\nweigh = weight.apparent\n    mass = jump.body_mass\njump.com_acceleration -> weigh.com_acceleration\njump.contact -> weigh.contact\n";
    let main = "include \"recipes/weigh.graph\" as odile\n    jump.body_mass = 58 kg\ninclude \"recipes/weigh.graph\" as pim\n";
    let plan = plan(dir.path(), &[("recipes/weigh.graph", recipe)], main).expect("checks");
    let mass = |node: &str| {
        let n = plan
            .nodes
            .iter()
            .find(|n| n.name == node)
            .unwrap_or_else(|| panic!("{node}"));
        let k = n.ty.spec().params.iter().position(|p| p.name == "mass").expect("mass");
        n.params[k].clone()
    };
    assert_eq!(mass("odile_weigh"), ParamValue::Number(58.0));
    assert_eq!(mass("pim_weigh"), ParamValue::Number(60.0));
}

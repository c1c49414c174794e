//! Recipes: a graph file included by another as a reusable piece.
//!
//! ```text
//! include "recipes/braid.graph" as odile      # the recipe's node `braid` becomes `odile_braid`
//!     braid.length = 55 cm                    # overrides, set on the recipe's own nodes
//!     braid.bending_stiffness = 2e-4 N m^2
//! odile.head -> odile_braid.anchor            # wire into the instance like any node
//! ```
//!
//! A recipe is a graph file (its `rate` and `frames` may be left out, and are ignored when it
//! is included). Its nodes, wires, outputs (CSV stems and bake/plot files get the `name_`
//! prefix too) join the including graph under the instance name, so one recipe can be
//! included many times. A recipe may include others. Every span keeps pointing into the file
//! it was written in, so problems name the recipe's own file, line and column.

use std::path::{Path, PathBuf};
use std::sync::Arc;

use crate::diag::{Place, Problem, Source};
use crate::graph::{GraphFile, IncludeDecl, ParamLine, PortRef, Spanned, Value, parse_recipe};

fn span_value(v: &mut Value, k: u16) {
    let fix = |u: &mut Option<Spanned<String>>| {
        if let Some(u) = u {
            u.span = u.span.in_file(k);
        }
    };
    match v {
        Value::Number { unit, .. } => fix(unit),
        Value::Vector { unit, units, .. } => {
            fix(unit);
            units.iter_mut().for_each(fix);
        }
        Value::Key {
            time_unit, unit, units, ..
        } => {
            fix(time_unit);
            fix(unit);
            units.iter_mut().for_each(fix);
        }
        Value::Word(_) | Value::Text(_) | Value::Reference { .. } => {}
    }
}

fn span_line(l: &mut ParamLine, k: u16) {
    l.name.span = l.name.span.in_file(k);
    l.value.span = l.value.span.in_file(k);
    span_value(&mut l.value.value, k);
}

fn span_port(r: &mut PortRef, k: u16) {
    r.node.span = r.node.span.in_file(k);
    r.port.span = r.port.span.in_file(k);
}

/// Points every span of a freshly parsed file at source `k`.
fn remap(g: &mut GraphFile, k: u16) {
    for n in &mut g.nodes {
        n.name.span = n.name.span.in_file(k);
        n.ty.span = n.ty.span.in_file(k);
        n.params.iter_mut().for_each(|l| span_line(l, k));
    }
    for w in &mut g.wires {
        span_port(&mut w.from, k);
        span_port(&mut w.to, k);
    }
    for w in &mut g.writes {
        span_port(&mut w.port, k);
        w.span = w.span.in_file(k);
        if let Some(n) = &mut w.name {
            n.span = n.span.in_file(k);
        }
        if let Some(f) = &mut w.format {
            f.span = f.span.in_file(k);
        }
    }
    for b in &mut g.blocks {
        b.file.span = b.file.span.in_file(k);
        for i in &mut b.items {
            span_port(&mut i.port, k);
            if let Some(c) = &mut i.chains {
                c.span = c.span.in_file(k);
            }
        }
        b.options.iter_mut().for_each(|l| span_line(l, k));
    }
    for i in &mut g.includes {
        i.file.span = i.file.span.in_file(k);
        i.name.span = i.name.span.in_file(k);
        for (n, l) in &mut i.overrides {
            n.span = n.span.in_file(k);
            span_line(l, k);
        }
    }
}

/// Renames every node of a recipe (and every reference to one) with `prefix`.
fn rename(g: &mut GraphFile, prefix: &str) {
    let p = |s: &mut String| *s = format!("{prefix}{s}");
    g.nodes.iter_mut().for_each(|n| p(&mut n.name.value));
    // `node.param` values name the recipe's own nodes.
    let lines = g
        .nodes
        .iter_mut()
        .flat_map(|n| n.params.iter_mut())
        .chain(g.blocks.iter_mut().flat_map(|b| b.options.iter_mut()));
    for l in lines {
        if let Value::Reference { node, .. } = &mut l.value.value {
            p(node);
        }
    }
    for w in &mut g.wires {
        p(&mut w.from.node.value);
        p(&mut w.to.node.value);
    }
    for w in &mut g.writes {
        match &mut w.name {
            Some(n) => p(&mut n.value),
            None => {
                // Keep the default stem `node.port` of the renamed node.
                let stem = format!("{prefix}{}.{}", w.port.node.value, w.port.port.value);
                w.name = Some(Spanned {
                    value: stem,
                    span: w.port.span(),
                });
            }
        }
        p(&mut w.port.node.value);
    }
    for b in &mut g.blocks {
        let path = Path::new(&b.file.value);
        let name = path
            .file_name()
            .map(|f| f.to_string_lossy().into_owned())
            .unwrap_or_default();
        b.file.value = path
            .with_file_name(format!("{prefix}{name}"))
            .to_string_lossy()
            .into_owned();
        b.items.iter_mut().for_each(|i| p(&mut i.port.node.value));
        // A review's `body = NODE` names one of the recipe's nodes.
        if b.kind == crate::graph::BlockKind::Review {
            for o in b.options.iter_mut().filter(|o| o.name.value == "body") {
                if let Value::Word(node) = &mut o.value.value {
                    p(node);
                }
            }
        }
    }
}

/// How deep recipes may include recipes.
pub const MAX_DEPTH: usize = 64;
/// How many files (the graph and its recipes) one graph may read.
pub const MAX_SOURCES: usize = 4096;

/// Expands every `include` of a parsed graph into it, recursively. Problems (a missing file, a
/// cycle, too deep a chain, an override of a node the recipe lacks, the recipe's own
/// problems) are added.
pub fn expand(graph: &mut GraphFile, problems: &mut Vec<Problem>) {
    let root_dir = Path::new(&graph.source.name)
        .parent()
        .map(Path::to_path_buf)
        .unwrap_or_default();
    let root = std::fs::canonicalize(&graph.source.name).unwrap_or_else(|_| PathBuf::from(&graph.source.name));
    let includes = std::mem::take(&mut graph.includes);
    let mut stack = vec![(root, None)];
    for inc in &includes {
        include(graph, inc, &root_dir, "", &mut stack, problems);
    }
}

fn include(
    root: &mut GraphFile,
    inc: &IncludeDecl,
    dir: &Path,
    prefix: &str,
    stack: &mut Vec<(PathBuf, Option<Place>)>,
    problems: &mut Vec<Problem>,
) {
    let srcs = root.sources.clone();
    let here = Place {
        source: Arc::clone(srcs.get(usize::from(inc.file.span.file)).unwrap_or(&root.source)),
        span: inc.file.span,
    };
    let path = dir.join(&inc.file.value);
    let canonical = match std::fs::canonicalize(&path) {
        Ok(c) => c,
        Err(e) => {
            problems.push(
                Problem::at(
                    &srcs,
                    inc.file.span,
                    format!("cannot read the recipe {}: {e}", path.display()),
                )
                .label("missing recipe")
                .help("a recipe's path is relative to the folder of the file that includes it"),
            );
            return;
        }
    };
    if stack.len() > MAX_DEPTH || root.sources.len() >= MAX_SOURCES {
        let what = if stack.len() > MAX_DEPTH {
            format!("recipes nested more than {MAX_DEPTH} deep")
        } else {
            format!("more than {MAX_SOURCES} recipe files in one graph")
        };
        problems.push(
            Problem::at(
                &srcs,
                inc.file.span,
                format!("including {} here makes {what}", path.display()),
            )
            .label("one include too many")
            .help("a graph's recipes may include recipes, but not without end: flatten the chain"),
        );
        return;
    }
    if let Some(pos) = stack.iter().position(|(p, _)| *p == canonical) {
        let mut p = Problem::at(
            &srcs,
            inc.file.span,
            format!("including {} here makes a cycle of includes", path.display()),
        )
        .label("includes a file that is already being included");
        p = match &stack[pos].1 {
            Some(first) => p.also(first.clone(), "it is first included here"),
            None => p.help("it is the graph file being run"),
        };
        problems.push(p);
        return;
    }
    let text = match crate::read_text(&canonical, crate::GRAPH_FILE_LIMIT) {
        Ok(t) => t,
        Err(e) => {
            problems.push(Problem::at(
                &srcs,
                inc.file.span,
                format!("cannot read the recipe {}: {e}", path.display()),
            ));
            return;
        }
    };
    let Ok(k) = u16::try_from(root.sources.len()) else {
        problems.push(Problem::at(
            &srcs,
            inc.file.span,
            "too many recipe files in one graph (65535)",
        ));
        return;
    };
    let source = Source::new(path.display().to_string(), text);
    let (mut recipe, mut found) = parse_recipe(&source);
    problems.append(&mut found);
    root.sources.push(Arc::clone(&source));
    remap(&mut recipe, k);
    let full = format!("{prefix}{}_", inc.name.value);
    // Overrides name the recipe's nodes by their own names.
    for (node, line) in &inc.overrides {
        match recipe.nodes.iter_mut().find(|n| n.name.value == node.value) {
            Some(n) => n.params.push(line.clone()),
            None => {
                let names: Vec<&str> = recipe.nodes.iter().map(|n| n.name.value.as_str()).collect();
                problems.push(
                    Problem::at(
                        &srcs,
                        node.span,
                        format!("the recipe {} has no node `{}`", path.display(), node.value),
                    )
                    .label("unknown node")
                    .help(format!("its nodes are: {}", names.join(", "))),
                );
            }
        }
    }
    rename(&mut recipe, &full);
    let nested = std::mem::take(&mut recipe.includes);
    root.nodes.append(&mut recipe.nodes);
    root.wires.append(&mut recipe.wires);
    root.writes.append(&mut recipe.writes);
    root.blocks.append(&mut recipe.blocks);
    let recipe_dir = canonical.parent().map(Path::to_path_buf).unwrap_or_default();
    stack.push((canonical, Some(here)));
    for n in &nested {
        include(root, n, &recipe_dir, &full, stack, problems);
    }
    stack.pop();
}

//! Plain-text descriptions of plugins and node types, for `heft nodes`.

use std::fmt::Write;

use heft_node_sdk::{Dimension, ParamType, ParamValue, PortSpec};

use crate::registry::{NodeType, Registry};

fn unit_of(d: Dimension) -> String {
    match d.si_symbol() {
        "" => String::new(),
        s => format!(" {s}"),
    }
}

fn value_text(v: &ParamValue, ty: &ParamType) -> String {
    let unit = match ty {
        ParamType::Number { dimension, .. } | ParamType::Vec3 { dimension, .. } | ParamType::Keys { dimension, .. } => {
            unit_of(*dimension)
        }
        _ => String::new(),
    };
    match v {
        ParamValue::Number(x) => format!("{x}{unit}"),
        ParamValue::Integer(i) => i.to_string(),
        ParamValue::Bool(b) => b.to_string(),
        ParamValue::Choice(c) => c.clone(),
        ParamValue::Vec3(a) => format!("({}, {}, {}){unit}", a[0], a[1], a[2]),
        ParamValue::Keys(k) => format!("{} keys", k.len()),
        ParamValue::Text(t) => format!("\"{t}\""),
    }
}

fn type_text(ty: &ParamType) -> String {
    match ty {
        ParamType::Number { dimension, min, max } => {
            format!(
                "number, {}; range {min} to {max}{}",
                dimension.describe(),
                unit_of(*dimension)
            )
        }
        ParamType::Integer { min, max } => format!("whole number; range {min} to {max}"),
        ParamType::Bool => "true or false".to_owned(),
        ParamType::Choice { options } => format!("one of: {}", options.join(", ")),
        ParamType::Vec3 { dimension, min, max } => format!(
            "vector (x, y, z), {}; each component {min} to {max}{}",
            dimension.describe(),
            unit_of(*dimension)
        ),
        ParamType::Text => "quoted text".to_owned(),
        ParamType::Keys { dimension, min_keys } => format!(
            "keyframes `time: (x, y, z) unit`, one per line, {}; at least {min_keys}",
            dimension.describe()
        ),
    }
}

fn port_line(out: &mut String, p: &PortSpec, width: usize) {
    let shape = match (p.kind.name(), p.points) {
        ("points", Some(n)) => format!("{n} points"),
        ("points", None) => "points".to_owned(),
        (k, _) => k.to_owned(),
    };
    let unit = match p.dimension.si_symbol() {
        "" => "-".to_owned(),
        s => s.to_owned(),
    };
    let opt = if p.optional { " (optional)" } else { "" };
    let _ = writeln!(out, "  {:<width$} {:<10} {:<8} {}{opt}", p.name, shape, unit, p.doc);
}

/// The listing of every plugin and node type, and of files that failed to load.
pub fn list(registry: &Registry) -> String {
    let mut out = String::new();
    if registry.plugins().is_empty() {
        out.push_str("no plugins found; give a folder with --plugins DIR or HEFT_PLUGIN_PATH\n");
    }
    for p in registry.plugins() {
        let d = p.plugin.descriptor();
        let _ = writeln!(out, "{} {}  ({})", d.name, d.version, p.plugin.origin().display());
        for n in &d.nodes {
            let full = format!("{}.{}", d.name, n.name);
            let clash = match registry.lookup(&full) {
                Err(_) => "  [offered by more than one plugin]",
                _ => "",
            };
            let _ = writeln!(out, "  {full:<28} {}{clash}", n.doc);
        }
    }
    let _ = writeln!(out, "built into heft");
    for h in registry.hosts() {
        let full = format!("{}.{}", crate::source::HOST_PLUGIN, h.spec().name);
        let _ = writeln!(out, "  {full:<28} {}", h.spec().doc);
    }
    for f in registry.failures() {
        let _ = writeln!(out, "not loaded: {f}");
    }
    out
}

/// Everything about one node type: ports, parameters with units, defaults, ranges, docs.
pub fn describe_type(t: &NodeType) -> String {
    let spec = t.spec();
    // One name column for ports and summaries, at least 18 wide.
    let width = spec
        .inputs
        .iter()
        .chain(&spec.outputs)
        .map(|p| p.name.len())
        .chain(spec.summaries.iter().map(|s| s.name.len()))
        .fold(18, usize::max);
    let mut out = String::new();
    match t.plugin() {
        Some(p) => {
            let d = p.plugin.descriptor();
            let _ = writeln!(
                out,
                "{}  (plugin {} {}, {})",
                t.full_name,
                d.name,
                d.version,
                t.origin()
            );
        }
        None => {
            let _ = writeln!(out, "{}  ({})", t.full_name, t.origin());
        }
    }
    let _ = writeln!(out, "{}", spec.doc);
    if !spec.notes.is_empty() {
        let _ = writeln!(out, "\n{}", spec.notes);
    }
    if let crate::registry::Provider::Plugin { plugin, index } = &t.provider
        && plugin.plugin.windowed(*index)
    {
        let _ = writeln!(
            out,
            "\nRuns in windows of frames: `heft run` holds a window of its outputs at a time (see `--window`)."
        );
    }
    let _ = writeln!(out, "\ninputs:");
    if spec.inputs.is_empty() {
        let _ = writeln!(out, "  (none)");
    }
    for p in &spec.inputs {
        port_line(&mut out, p, width);
    }
    let _ = writeln!(out, "\noutputs:");
    if spec.outputs.is_empty() {
        let _ = writeln!(out, "  (none of its own: each node it reads has them, see above)");
    }
    for p in &spec.outputs {
        port_line(&mut out, p, width);
    }
    if !spec.summaries.is_empty() {
        let _ = writeln!(out, "\nsummary values (in run.json):");
        for s in &spec.summaries {
            let unit = match s.dimension.si_symbol() {
                "" => "-",
                u => u,
            };
            let _ = writeln!(out, "  {:<width$} {:<8} {}", s.name, unit, s.doc);
        }
    }
    let _ = writeln!(out, "\nparameters:");
    if spec.params.is_empty() {
        let _ = writeln!(out, "  (none)");
    }
    for p in &spec.params {
        let default = match (&p.scaled_default, &p.default) {
            (Some((other, factor)), Some(v)) => {
                format!("default {factor} x `{other}` ({} at its default)", value_text(v, &p.ty))
            }
            _ => p.default.as_ref().map_or_else(
                || "required".to_owned(),
                |v| format!("default {}", value_text(v, &p.ty)),
            ),
        };
        let _ = writeln!(out, "  {}: {}", p.name, p.doc);
        let _ = writeln!(out, "      {}; {default}", type_text(&p.ty));
    }
    out
}

//! Checking `bake` and `plot` blocks into plans the writers follow (the writers live in
//! `heft-formats`; a plan names what to write, never how).

use std::sync::Arc;

use heft_node_sdk::{Dimension, PortKind, Shape};

use crate::diag::{Problem, Source};
use crate::graph::{BlockKind, OutputBlock, ParamLine, PortRef, Value};
use crate::units;

/// How a glTF bake is stored.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BakeFormat {
    /// One binary `.glb` file.
    Glb,
    /// `.gltf` JSON with its buffer embedded as a base64 data URI.
    GltfEmbedded,
    /// `.gltf` JSON with its buffer in a `.bin` file beside it.
    GltfSeparate,
}

/// What a baked strand hangs from.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum BakeAnchor {
    /// Nothing: the chains hang under a still node of their own.
    None,
    /// A transform series: the chains hang under a node that shows it.
    Series {
        /// Node index.
        node: usize,
        /// Output index.
        output: usize,
    },
    /// A joint of a node hierarchy a source read (a glTF character): the chains hang under
    /// that bone.
    Joint {
        /// The character node's index.
        node: usize,
        /// The output that carries the joint (named after it).
        output: usize,
    },
}

/// One baked series.
#[derive(Debug, Clone, PartialEq)]
pub struct BakeItem {
    /// Node index.
    pub node: usize,
    /// Output index.
    pub output: usize,
    /// Its shape.
    pub shape: Shape,
    /// Joints per chain, for points baked as strands.
    pub chain: Option<usize>,
    /// `node.port`, used to name the glTF nodes.
    pub name: String,
    /// For chains: what they hang from.
    pub anchor: BakeAnchor,
}

/// A checked `bake` block.
#[derive(Debug, Clone, PartialEq)]
pub struct PlannedBake {
    /// File name in the output folder.
    pub file: String,
    /// Storage.
    pub format: BakeFormat,
    /// True when the data is already Y-up (written as is); false (the default) for heft's
    /// Z-up world, converted to glTF's Y-up.
    pub y_up_source: bool,
    /// The series.
    pub items: Vec<BakeItem>,
    /// The frames baked (first and last frame numbers), when not the whole run.
    pub range: Option<(i64, i64)>,
    /// `character = NAME`: the character node whose own file the bake is written into (its
    /// meshes, skins, materials and clips copied through, the strands added under its bones).
    pub character: Option<(String, crate::diag::Span)>,
    /// The character node's index, once checked.
    pub base: Option<usize>,
}

/// A port reference resolved to (node, output, shape, dimension), or a problem.
pub type Resolve<'a> = dyn Fn(&PortRef) -> Result<(usize, usize, Shape, Dimension), Problem> + 'a;

/// A number parameter of a node by `node` and `param` name: its SI value and dimension, or
/// why there is none (for a block option written `node.param`).
pub type ParamOf<'a> = dyn Fn(&str, &str) -> Result<(f64, Dimension), String> + 'a;

fn word_option(src: &Arc<Source>, line: &ParamLine, options: &[&str]) -> Result<String, Problem> {
    match &line.value.value {
        Value::Word(w) | Value::Text(w) if options.contains(&w.as_str()) => Ok(w.clone()),
        _ => Err(Problem::new(
            src,
            line.value.span,
            format!("`{}` takes one of: {}", line.name.value, options.join(", ")),
        )
        .label("not an option")),
    }
}

/// A file name for the output folder: relative, no `..`, no folder outside it.
pub fn check_file_name(src: &Arc<Source>, block: &OutputBlock, extensions: &[&str]) -> Result<(), Problem> {
    let f = &block.file.value;
    let path = std::path::Path::new(f);
    let bad_place = f.is_empty()
        || path.is_absolute()
        || f.ends_with('/')
        || f.ends_with('\\')
        || path.file_name().is_none()
        || path.components().any(|c| matches!(c, std::path::Component::ParentDir));
    if bad_place {
        return Err(Problem::new(
            src,
            block.file.span,
            format!("`{f}` is not a file name inside the output folder"),
        )
        .label("not a relative file name")
        .help("outputs are written into the `--out` folder; give a name such as \"odile.glb\""));
    }
    if path
        .file_name()
        .and_then(|n| n.to_str())
        .is_some_and(|n| n.starts_with(".heft-"))
    {
        return Err(Problem::new(
            src,
            block.file.span,
            format!("`{f}`: names starting with `.heft-` are heft's own in the output folder"),
        )
        .label("reserved name")
        .help("give another name, such as \"odile.glb\""));
    }
    let ext = path.extension().and_then(|e| e.to_str()).unwrap_or("");
    if !extensions.contains(&ext) {
        return Err(Problem::new(
            src,
            block.file.span,
            format!(
                "`{f}` should end in {}",
                extensions
                    .iter()
                    .map(|e| format!(".{e}"))
                    .collect::<Vec<_>>()
                    .join(" or ")
            ),
        )
        .label("unknown file type"));
    }
    Ok(())
}

/// What is wrong with a series line's `joints N` (`c`) for an output of shape `shape`, if
/// anything: only points form chains, a chain has at least 2 joints, and the chains share the
/// points out evenly.
fn chain_problem(
    src: &Arc<Source>,
    item: &crate::graph::BlockItem,
    shape: Shape,
    c: &crate::graph::Spanned<usize>,
) -> Option<Problem> {
    if shape.kind != PortKind::Points {
        return Some(Problem::new(src, c.span, "`joints` is for points outputs").label("not points"));
    }
    if c.value < 2 {
        return Some(Problem::new(src, c.span, "a chain needs at least 2 points").label("too short"));
    }
    (!shape.points.is_multiple_of(c.value)).then(|| {
        Problem::new(
            src,
            c.span,
            format!(
                "`{}` has {} points, not a whole number of chains of {} joints",
                item.port.text(),
                shape.points,
                c.value
            ),
        )
        .label("does not divide")
    })
}

/// Checks a `bake` block.
pub fn plan_bake(src: &Arc<Source>, block: &OutputBlock, resolve: &Resolve<'_>) -> Result<PlannedBake, Vec<Problem>> {
    debug_assert_eq!(block.kind, BlockKind::Bake);
    let mut problems = Vec::new();
    if let Err(p) = check_file_name(src, block, &["glb", "gltf"]) {
        problems.push(p);
    }
    let glb = block.file.value.ends_with(".glb");
    let mut format = if glb { BakeFormat::Glb } else { BakeFormat::GltfSeparate };
    let mut y_up_source = false;
    let mut range = None;
    let mut character = None;
    for opt in &block.options {
        match opt.name.value.as_str() {
            "character" => match &opt.value.value {
                Value::Word(w) | Value::Text(w) => character = Some((w.clone(), opt.value.span)),
                _ => problems.push(
                    Problem::new(src, opt.value.span, "`character` takes the name of a `track.character` node")
                        .label("not a node name"),
                ),
            },
            "frames" => match frame_range(&opt.value.value) {
                Some(r) => range = Some(r),
                None => problems.push(
                    Problem::new(src, opt.value.span, "`frames` takes a range of frame numbers `A..B`")
                        .label("not a frame range")
                        .help("for example `frames = 12..84`: the first and last frames baked, inside the run's range"),
                ),
            },
            "axes" => match word_option(src, opt, &["z_up", "y_up"]) {
                Ok(w) => y_up_source = w == "y_up",
                Err(p) => problems.push(p),
            },
            "buffer" if !glb => match word_option(src, opt, &["separate", "embedded"]) {
                Ok(w) => {
                    format = if w == "embedded" { BakeFormat::GltfEmbedded } else { BakeFormat::GltfSeparate }
                }
                Err(p) => problems.push(p),
            },
            "buffer" => problems.push(
                Problem::new(src, opt.name.span, "a .glb file always holds its buffer")
                    .label("not for .glb")
                    .help("`buffer = embedded` or `separate` is for .gltf files"),
            ),
            other => problems.push(
                Problem::new(src, opt.name.span, format!("`bake` has no option `{other}`"))
                    .label("unknown option")
                    .help("options: frames = A..B (the frames baked), character = NODE (write into that character's own file), axes = z_up | y_up (the data's up axis; heft's world is z_up), buffer = separate | embedded (.gltf only)"),
            ),
        }
    }
    if block.items.is_empty() {
        problems.push(
            Problem::new(src, block.file.span, "this bake lists no series")
                .help("list indented lines such as `odile.head` or `braid.positions`"),
        );
    }
    let mut items = Vec::new();
    for item in &block.items {
        let (node, output, shape, _) = match resolve(&item.port) {
            Ok(r) => r,
            Err(p) => {
                problems.push(p);
                continue;
            }
        };
        let span = item.port.span();
        match (shape.kind, &item.chains) {
            (PortKind::Scalar | PortKind::Flag, _) => {
                problems.push(
                    Problem::new(
                        src,
                        span,
                        format!(
                            "`{}` is {}: glTF animates positions and rotations",
                            item.port.text(),
                            shape.kind.name()
                        ),
                    )
                    .label("cannot be baked")
                    .help("bake vec3, transform or points outputs; write scalars as CSV with `write`"),
                );
                continue;
            }
            (_, Some(c)) => {
                if let Some(p) = chain_problem(src, item, shape, c) {
                    problems.push(p);
                    continue;
                }
            }
            _ => {}
        }
        items.push(BakeItem {
            node,
            output,
            shape,
            chain: item.chains.as_ref().map(|c| c.value),
            name: item.port.text(),
            anchor: BakeAnchor::None,
        });
    }
    if problems.is_empty() {
        Ok(PlannedBake {
            file: block.file.value.clone(),
            format,
            y_up_source,
            items,
            range,
            character,
            base: None,
        })
    } else {
        Err(problems)
    }
}

/// `A..B` with whole frame numbers, A <= B.
fn frame_range(v: &Value) -> Option<(i64, i64)> {
    let Value::Text(t) = v else { return None };
    let (a, b) = t.split_once("..")?;
    let (a, b) = (a.trim().parse::<i64>().ok()?, b.trim().parse::<i64>().ok()?);
    (a <= b).then_some((a, b))
}

/// What a plot shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Style {
    /// Series against time.
    Lines,
    /// A ground reaction force curve.
    Weight,
    /// Paths projected on a plane.
    Path,
}

/// One plotted series.
#[derive(Debug, Clone, PartialEq)]
pub struct PlotItem {
    /// Node index.
    pub node: usize,
    /// Output index.
    pub output: usize,
    /// Its shape.
    pub shape: Shape,
    /// Its dimension.
    pub dimension: Dimension,
    /// Points per chain (path style: only chain tips are drawn).
    pub chain: Option<usize>,
    /// `node.port`.
    pub name: String,
}

/// A checked `plot` block.
#[derive(Debug, Clone, PartialEq)]
pub struct PlannedPlot {
    /// File name in the output folder.
    pub file: String,
    /// What it shows.
    pub style: Style,
    /// The series.
    pub items: Vec<PlotItem>,
    /// Body mass for the body_weights style (kg).
    pub mass: Option<f64>,
    /// The two axes of the path style (0 = x, 1 = y, 2 = z).
    pub plane: [usize; 2],
    /// Title.
    pub title: String,
}

/// Checks a `plot` block.
pub fn plan_plot(
    src: &Arc<Source>,
    block: &OutputBlock,
    resolve: &Resolve<'_>,
    param_of: &ParamOf<'_>,
) -> Result<PlannedPlot, Vec<Problem>> {
    let mut problems = Vec::new();
    if let Err(p) = check_file_name(src, block, &["svg", "png"]) {
        problems.push(p);
    }
    let mut style = Style::Lines;
    let mut mass = None;
    let mut plane = [0, 2];
    let mut title = block.file.value.clone();
    for opt in &block.options {
        let v = &opt.value;
        let bad =
            |what: &str| Problem::new(src, v.span, format!("`{}` takes {what}", opt.name.value)).label("not accepted");
        match (opt.name.value.as_str(), &v.value) {
            ("style", Value::Word(w)) => match w.as_str() {
                "lines" => style = Style::Lines,
                "body_weights" => style = Style::Weight,
                "path" => style = Style::Path,
                _ => problems.push(bad("lines, weight or path")),
            },
            ("mass", Value::Number { value, unit, .. }) => match unit.as_ref().and_then(|u| units::lookup(&u.value)) {
                Some((Dimension::Mass, f)) if value * f > 0.0 => mass = Some(value * f),
                _ => problems.push(bad("a positive mass with its unit, such as `58 kg`")),
            },
            ("plane", Value::Word(w)) => match w.as_str() {
                "xz" => plane = [0, 2],
                "xy" => plane = [0, 1],
                "yz" => plane = [1, 2],
                _ => problems.push(bad("xz, xy or yz")),
            },
            ("title", Value::Text(t)) => title = t.clone(),
            ("style", _) => problems.push(bad("lines, body_weights or path")),
            ("mass", Value::Reference { node, param }) => match param_of(node, param) {
                Ok((v, Dimension::Mass)) if v > 0.0 => mass = Some(v),
                Ok((_, d)) => problems.push(
                    Problem::new(src, opt.value.span, format!("`{node}.{param}` is {}, not a mass", d.describe()))
                        .label("not a mass"),
                ),
                Err(why) => problems.push(Problem::new(src, opt.value.span, why).label("no such parameter")),
            },
            ("mass", _) => problems.push(bad("a positive mass with its unit, such as `58 kg`, or `node.param`")),
            ("plane", _) => problems.push(bad("xz, xy or yz")),
            ("title", _) => problems.push(bad("a quoted text")),
            (other, _) => problems.push(
                Problem::new(src, opt.name.span, format!("`plot` has no option `{other}`"))
                    .label("unknown option")
                    .help("options: style = lines | body_weights | path, mass = .. kg, plane = xz | xy | yz, title = \"..\""),
            ),
        }
    }
    let mut items = Vec::new();
    for item in &block.items {
        match resolve(&item.port) {
            Ok((node, output, shape, dimension)) => items.push((item, node, output, shape, dimension)),
            Err(p) => problems.push(p),
        }
    }
    if block.items.is_empty() {
        problems.push(
            Problem::new(src, block.file.span, "this plot lists no series")
                .help("list indented lines such as `weight.force`"),
        );
    }
    let mut planned = Vec::new();
    for (item, node, output, shape, dimension) in items {
        let span = item.port.span();
        let ok = match style {
            Style::Lines => matches!(shape.kind, PortKind::Scalar | PortKind::Vec3 | PortKind::Flag),
            Style::Weight => matches!(shape.kind, PortKind::Scalar | PortKind::Flag),
            Style::Path => matches!(shape.kind, PortKind::Points | PortKind::Vec3 | PortKind::Transform),
        };
        if !ok {
            problems.push(Problem::new(src, span, format!("`{}` ({}) cannot be drawn in this plot style", item.port.text(), shape.kind.name())).label("wrong kind").help(
                "lines: scalar, flag or vec3 series; weight: a force scalar and a contact flag; path: points, vec3 or transform",
            ));
            continue;
        }
        planned.push(PlotItem {
            node,
            output,
            shape,
            dimension,
            chain: item.chains.as_ref().map(|c| c.value),
            name: item.port.text(),
        });
    }
    match style {
        Style::Weight => {
            let forces = planned.iter().filter(|i| i.shape.kind == PortKind::Scalar).count();
            let flags = planned.iter().filter(|i| i.shape.kind == PortKind::Flag).count();
            if forces != 1
                || flags > 1
                || planned
                    .iter()
                    .any(|i| i.shape.kind == PortKind::Scalar && i.dimension != Dimension::Force)
            {
                problems.push(
                    Problem::new(
                        src,
                        block.file.span,
                        "a body_weights plot takes one force series (N) and at most one contact flag",
                    )
                    .label("body_weights plot"),
                );
            }
            if mass.is_none() {
                problems.push(
                    Problem::new(src, block.file.span, "a body_weights plot needs the body mass")
                        .label("body_weights plot")
                        .help("add `mass = 58 kg` (or `mass = node.body_mass`) under the plot"),
                );
            }
        }
        Style::Lines => {
            let dims: Vec<Dimension> = planned
                .iter()
                .filter(|i| i.shape.kind != PortKind::Flag)
                .map(|i| i.dimension)
                .collect();
            if dims.windows(2).any(|w| w[0] != w[1]) {
                problems.push(
                    Problem::new(src, block.file.span, "the series of one plot must share a unit")
                        .label("mixed units")
                        .help("make one plot per unit"),
                );
            }
        }
        Style::Path => {}
    }
    if problems.is_empty() {
        Ok(PlannedPlot {
            file: block.file.value.clone(),
            style,
            items: planned,
            mass,
            plane,
            title,
        })
    } else {
        Err(problems)
    }
}

/// What a review page shows of one series.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ReviewShow {
    /// Points in the 3D view: chains of this many joints drawn as lines or tubes (a strand's
    /// points, or `joints N`), or loose points when `None`.
    Points {
        /// Joints per chain.
        chain: Option<usize>,
    },
    /// A vec3 or transform in metres: a point in the 3D view with its path.
    Point,
    /// A list of colliders (`heft_node_sdk::colliders`' layout): capsules in the 3D view.
    Colliders,
    /// A scalar, a flag or a vec3 of another dimension: a curve under the view, with a cursor.
    Curve,
}

/// One series a review page shows.
#[derive(Debug, Clone, PartialEq)]
pub struct ReviewItem {
    /// Node index.
    pub node: usize,
    /// Output index.
    pub output: usize,
    /// Its shape.
    pub shape: Shape,
    /// Its dimension.
    pub dimension: Dimension,
    /// `node.port`.
    pub name: String,
    /// How it is shown.
    pub show: ReviewShow,
}

/// How a review draws strands at first (the page switches between them).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StrandLook {
    /// One line per strand.
    Lines,
    /// Tubes of the review's `strand_radius`.
    Tubes,
}

/// A checked `review` block.
#[derive(Debug, Clone, PartialEq)]
pub struct PlannedReview {
    /// File name in the output folder (`.html`).
    pub file: String,
    /// The page's title.
    pub title: String,
    /// The frames shown (first and last frame numbers), when not the whole run.
    pub range: Option<(i64, i64)>,
    /// `body = NODE`: the node whose joints are drawn (a character's with its bones) and whose
    /// motion is audited, as written.
    pub body_name: Option<(String, crate::diag::Span)>,
    /// The body node's index, once checked.
    pub body: Option<usize>,
    /// The series shown, in the block's order (colliders too).
    pub items: Vec<ReviewItem>,
    /// `mass = ..`: the body mass the audit uses (kg), instead of the body node's `body_mass`.
    pub mass: Option<f64>,
    /// How strands are drawn at first.
    pub strands: StrandLook,
    /// The radius of a strand drawn as a tube, m.
    pub strand_radius: f64,
    /// Whether the graph's plots are drawn on the page too.
    pub plots: bool,
    /// Whether the body's motion is audited and its findings put on the timeline.
    pub audit: bool,
}

/// The radius of strands drawn as tubes when the block gives none: 3 mm, a braid's.
pub const DEFAULT_STRAND_RADIUS: f64 = 0.003;

/// `on` / `off` (or `true` / `false`).
fn switch(v: &Value) -> Option<bool> {
    match v {
        Value::Word(w) if w == "on" || w == "true" => Some(true),
        Value::Word(w) if w == "off" || w == "false" => Some(false),
        _ => None,
    }
}

/// Checks a `review` block: the plan of what it shows (the lines that could be read) and the
/// problems found, so that the checker, which fills in the chains of a strand node's points and
/// the body node, reports its own problems with the block's others.
pub fn plan_review(
    src: &Arc<Source>,
    block: &OutputBlock,
    resolve: &Resolve<'_>,
    param_of: &ParamOf<'_>,
) -> (PlannedReview, Vec<Problem>) {
    debug_assert_eq!(block.kind, BlockKind::Review);
    let mut problems = Vec::new();
    if let Err(p) = check_file_name(src, block, &["html"]) {
        problems.push(p);
    }
    let mut title = block.file.value.clone();
    let mut range = None;
    let mut body_name = None;
    let mut mass = None;
    let mut strands = StrandLook::Lines;
    let mut strand_radius = DEFAULT_STRAND_RADIUS;
    let mut plots = true;
    let mut audit = true;
    let mut items = Vec::new();
    for opt in &block.options {
        let v = &opt.value;
        let bad =
            |what: &str| Problem::new(src, v.span, format!("`{}` takes {what}", opt.name.value)).label("not accepted");
        match (opt.name.value.as_str(), &v.value) {
            ("title", Value::Text(t)) => title = t.clone(),
            ("title", _) => problems.push(bad("a quoted text")),
            ("frames", value) => {
                match frame_range(value) {
                    Some(r) => range = Some(r),
                    None => problems.push(bad("a range of frame numbers `A..B`").label("not a frame range").help(
                        "for example `frames = 12..84`: the first and last frames shown, inside the run's range",
                    )),
                }
            }
            ("body", Value::Word(w)) => body_name = Some((w.clone(), v.span)),
            ("body", _) => problems.push(
                bad("the name of a node with joints (a `track.character`, a jump planner)").label("not a node name"),
            ),
            ("colliders", Value::Reference { node, param }) => {
                // `node.port`, with each name's own place for the messages.
                let start = v.span.start;
                let port = PortRef {
                    node: crate::graph::Spanned {
                        value: node.clone(),
                        span: crate::diag::Span {
                            len: node.len(),
                            ..v.span
                        },
                    },
                    port: crate::graph::Spanned {
                        value: param.clone(),
                        span: crate::diag::Span {
                            start: start + node.len() + 1,
                            len: param.len(),
                            ..v.span
                        },
                    },
                };
                match resolve(&port) {
                    Ok((node, output, shape, dimension)) => {
                        let whole = shape.points % heft_node_sdk::colliders::POINTS_PER_COLLIDER == 0;
                        if shape.kind != PortKind::Points || dimension != Dimension::Length || !whole {
                            problems.push(
                                Problem::new(
                                    src,
                                    v.span,
                                    if shape.kind == PortKind::Points && dimension == Dimension::Length {
                                        format!(
                                            "`{}` has {} points: a list of colliders has three per collider",
                                            port.text(),
                                            shape.points
                                        )
                                    } else {
                                        format!(
                                            "`{}` is {} ({}): a list of colliders is points in m, three per collider",
                                            port.text(),
                                            shape.kind.name(),
                                            dimension.describe()
                                        )
                                    },
                                )
                                .label("not a collider list")
                                .help(
                                    "name an output that a strand's `colliders` input reads, such as `odile.colliders`",
                                ),
                            );
                        } else {
                            items.push(ReviewItem {
                                node,
                                output,
                                shape,
                                dimension,
                                name: port.text(),
                                show: ReviewShow::Colliders,
                            });
                        }
                    }
                    Err(p) => problems.push(p),
                }
            }
            ("colliders", _) => problems.push(bad("an output `node.port` holding a list of colliders")),
            ("mass", Value::Number { value, unit, .. }) => match unit.as_ref().and_then(|u| units::lookup(&u.value)) {
                Some((Dimension::Mass, f)) if value * f > 0.0 => mass = Some(value * f),
                _ => problems.push(bad("a positive mass with its unit, such as `55 kg`")),
            },
            ("mass", Value::Reference { node, param }) => match param_of(node, param) {
                Ok((m, Dimension::Mass)) if m > 0.0 => mass = Some(m),
                Ok((_, d)) => problems.push(
                    Problem::new(src, v.span, format!("`{node}.{param}` is {}, not a mass", d.describe()))
                        .label("not a mass"),
                ),
                Err(why) => problems.push(Problem::new(src, v.span, why).label("no such parameter")),
            },
            ("mass", _) => problems.push(bad("a positive mass with its unit, such as `55 kg`, or `node.param`")),
            ("strands", Value::Word(w)) if w == "lines" => strands = StrandLook::Lines,
            ("strands", Value::Word(w)) if w == "tubes" => strands = StrandLook::Tubes,
            ("strands", _) => problems.push(bad("lines or tubes")),
            ("strand_radius", Value::Number { value, unit, .. }) => {
                match unit.as_ref().and_then(|u| units::lookup(&u.value)) {
                    Some((Dimension::Length, f)) if value * f > 0.0 && value * f <= 1.0 => strand_radius = value * f,
                    _ => problems.push(bad("a length above 0 and at most 1 m, such as `3 mm`")),
                }
            }
            ("strand_radius", _) => problems.push(bad("a length above 0 and at most 1 m, such as `3 mm`")),
            ("plots", value) => match switch(value) {
                Some(b) => plots = b,
                None => problems.push(bad("on or off")),
            },
            ("audit", value) => match switch(value) {
                Some(b) => audit = b,
                None => problems.push(bad("on or off")),
            },
            (other, _) => problems.push(
                Problem::new(src, opt.name.span, format!("`review` has no option `{other}`"))
                    .label("unknown option")
                    .help(
                        "options: title = \"..\", frames = A..B, body = NODE, colliders = node.port, mass = .. kg, \
                         strands = lines | tubes, strand_radius = .. mm, plots = on | off, audit = on | off",
                    ),
            ),
        }
    }
    if block.items.is_empty() && body_name.is_none() && items.is_empty() {
        problems.push(
            Problem::new(src, block.file.span, "this review shows nothing")
                .help("list series such as `braid.positions` or `weight.force`, or a body: `body = odile`"),
        );
    }
    for item in &block.items {
        let (node, output, shape, dimension) = match resolve(&item.port) {
            Ok(r) => r,
            Err(p) => {
                problems.push(p);
                continue;
            }
        };
        if let Some(p) = item.chains.as_ref().and_then(|c| chain_problem(src, item, shape, c)) {
            problems.push(p);
            continue;
        }
        let show = match (shape.kind, &item.chains) {
            (PortKind::Points, chain) if dimension == Dimension::Length => ReviewShow::Points {
                chain: chain.as_ref().map(|c| c.value),
            },
            (PortKind::Vec3 | PortKind::Transform, _) if dimension == Dimension::Length => ReviewShow::Point,
            (PortKind::Scalar | PortKind::Flag | PortKind::Vec3, _) => ReviewShow::Curve,
            _ => {
                problems.push(
                    Problem::new(
                        src,
                        item.port.span(),
                        format!(
                            "`{}` is {} in {}: a review draws positions in m and curves of scalars, flags and vectors",
                            item.port.text(),
                            shape.kind.name(),
                            dimension.describe()
                        ),
                    )
                    .label("cannot be shown")
                    .help("points, vec3 and transforms in m are drawn in 3D; scalars, flags and other vec3 as curves"),
                );
                continue;
            }
        };
        items.push(ReviewItem {
            node,
            output,
            shape,
            dimension,
            name: item.port.text(),
            show,
        });
    }
    let planned = PlannedReview {
        file: block.file.value.clone(),
        title,
        range,
        body_name,
        body: None,
        items,
        mass,
        strands,
        strand_radius,
        plots,
        audit,
    };
    (planned, problems)
}

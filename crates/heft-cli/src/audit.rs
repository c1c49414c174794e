//! `heft audit`: where a motion breaks physics, from a graph's outputs or a glTF character.

use std::path::{Path, PathBuf};
use std::process::ExitCode;

use clap::Args;
use heft_audit::body::BodyModel;
use heft_audit::skeleton::{Reading, parse_overrides};
use heft_audit::{Limits, Motion, Report, Severity, audit};
use heft_formats::character::{self, Axes, Outside, Request};
use heft_formats::motion::{GraphBody, body_mass, graph_motion, implied_weight, skeleton_of};
use heft_runtime::registry::Registry;
use heft_runtime::{check, eval, read_graph};

use crate::{FAILED, parse_frames};

/// Exit status when a finding reaches the `--fail-on` severity (1 is a bad input, 2 a usage
/// error).
pub(crate) const FINDINGS: u8 = 3;

/// The limits and their sources, for `--help`.
pub(crate) const LIMITS_HELP: &str = "\
Findings and their limits (each with its source; `common practice` where none):
  flight not ballistic   the centre of mass's fitted acceleration in the air differs from -g by
                         more than 10 % of g (20 %: error). A measurement tolerance, no source.
  take-off without push  the upward speed over the last interval on the ground falls more than
                         0.25 m/s (0.5 m/s: error) short of the least the flight allows: its
                         ballistic speed there less what a push of at most 3 g adds in a frame
                         (standing jumps push at 1 to 2 g: Linthorne 2001, Am J Phys
                         69(11):1198-1204, from memory).
  landing too soft       peak ground force below 1.5 body weights after a fall faster than
                         0.5 m/s; landings peak at 3 to 11 body weights (McNitt-Gray 1993,
                         J Biomech 26(9):1037-1046, from memory).
  landing too hard       peak ground force above 11 body weights (the top of McNitt-Gray 1993's
                         range, from memory).
  arm swing after take-off  the arms' upward speed relative to the centre of mass grows by
                         more than 0.5 m/s in the air (a warning, with the rise it costs).
  passive element not weightless  a chain (hair, braid, strap) swings about its anchor in the
                         air following more than 0.5 g of gravity's pull (weightless: 0),
                         the fit explaining at least 30 % of the swing (a swing driven by
                         contact or bending scatters about it). Of our own, no source.
  passive element not tugged on landing  over the 0.25 s after touch-down a chain's swing
                         follows less than 0.5 of the apparent gravity g - a of its
                         decelerating anchor (1 is physics), moving less than half what that
                         gravity gives it: it keeps still where the landing should pull it.
                         Of our own, no source.
  foot sliding           a planted foot (within 1 cm of its lowest) travels more than 2 cm
                         along the ground in a contact phase. Common practice, no source.
  contact chatter        a contact or flight shorter than 0.05 s; the shortest ground contacts,
                         top-speed sprinting, last about 0.08 s (Weyand et al. 2000, J Appl
                         Physiol 89:1991-1999, from memory).
The centre of mass of a skeleton: de Leva 1996 (J Biomech 29(9):1223-1230, Table 4) or Winter
2009 (Table 4.1), by the joint names most rigs share (`--joint NAME=ROLE` maps others).

Exit status: 0 no finding at or above --fail-on; 3 one is; 1 the input cannot be audited;
2 a usage error.";

/// `heft audit` arguments.
#[derive(Args, Debug)]
pub(crate) struct AuditArgs {
    /// A graph file, or a glTF 2.0 character (.gltf or .glb).
    #[arg(value_name = "INPUT")]
    input: PathBuf,
    /// Graph: the centre of mass, `node.port` (a vec3 in m; default: the output named
    /// `com_position`).
    #[arg(long, value_name = "NODE.PORT")]
    com: Option<String>,
    /// Graph: the feet's contact, `node.port` (a flag; default: the output named `contact` of
    /// the centre of mass's node).
    #[arg(long, value_name = "NODE.PORT")]
    contact: Option<String>,
    /// Graph: a foot's position, `node.port` (a vec3 or transform in m; repeatable). With
    /// feet and no `--contact`, the feet are on the ground within `--ground-clearance` of their
    /// lowest point; a planted foot must not slide.
    #[arg(long = "foot", value_name = "NODE.PORT")]
    foot: Vec<String>,
    /// Body mass in kg (graph default: the `body_mass` parameter of the centre of mass's node;
    /// a glTF character needs it).
    #[arg(long, value_name = "KG")]
    mass: Option<f64>,
    /// The segment table for a skeleton and the arms: de-leva-male, de-leva-female or winter
    /// (default: de-leva-male for a glTF character, winter for a graph, the table heft's jump
    /// planner uses).
    #[arg(long, value_name = "MODEL")]
    body: Option<String>,
    /// glTF: a joint's role when its name says nothing (`ponytail_root=head`, `LeftShoulder=`
    /// to leave a joint out). Roles: neck, head, head_top, and shoulder, elbow, wrist, knuckle,
    /// hip, knee, ankle, toe with `_l` or `_r`. Repeatable.
    #[arg(long = "joint", value_name = "NAME=ROLE")]
    joints: Vec<String>,
    /// glTF: a file of `NAME=ROLE` lines (`#` starts a comment), read before any `--joint`:
    /// a rig's mapping kept beside it.
    #[arg(long = "joint-map", value_name = "FILE")]
    joint_map: Option<PathBuf>,
    /// glTF: the animation clip, by name or index (default: the file's only clip).
    #[arg(long, value_name = "NAME")]
    clip: Option<String>,
    /// glTF: frames per second to sample the clip at.
    #[arg(long, value_name = "FPS", default_value_t = 24.0)]
    rate: f64,
    /// glTF: the file is Z up already (glTF is Y up).
    #[arg(long)]
    z_up: bool,
    /// A foot within this height (m) of the lowest any foot gets is on the ground (a glTF
    /// character, or a graph's `--foot` positions).
    #[arg(long, value_name = "M", default_value_t = 0.03)]
    ground_clearance: f64,
    /// The severity that fails the audit (exit status 3): warning or error.
    #[arg(long, value_name = "SEVERITY", default_value = "warning", value_parser = ["warning", "error"])]
    fail_on: String,
    /// Also write every figure and finding as JSON to this file.
    #[arg(long, value_name = "FILE")]
    json: Option<PathBuf>,
    /// Also draw the implied ground force in body weights with the contact phases and each
    /// finding's frames shaded (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
    /// Graph: override a parameter, `node.param=VALUE` with units. Repeatable.
    #[arg(long = "set", value_name = "NODE.PARAM=VALUE")]
    set: Vec<String>,
    /// Audit only these frames: `A..B`, inclusive.
    #[arg(long, value_name = "A..B", value_parser = parse_frames, allow_hyphen_values = true)]
    frames: Option<(i64, i64)>,
}

/// What the audit read besides the motion.
#[derive(Debug, Default, serde::Serialize)]
struct Source {
    input: String,
    com: String,
    contact: String,
    body_model: Option<&'static str>,
    unmapped_joints: Vec<String>,
    /// Graph: the largest distance (m) between the centre of mass the node gives and the one
    /// the segment table gives for the node's own joints, when they are all there.
    skeleton_com_difference: Option<f64>,
}

pub(crate) fn run(registry: &Registry, args: &AuditArgs, color: bool, quiet: bool) -> ExitCode {
    let fail_on = match args.fail_on.as_str() {
        "warning" => Severity::Warning,
        "error" => Severity::Error,
        other => {
            eprintln!("error: --fail-on takes `warning` or `error`, not `{other}`");
            return ExitCode::from(FAILED);
        }
    };
    if let Some(m) = args.mass
        && !(m.is_finite() && m > 0.0 && m <= 1000.0)
    {
        eprintln!("error: --mass {m}: a body mass in kg above 0 and at most 1000");
        return ExitCode::from(FAILED);
    }
    // Where the report goes is checked before the motion is read (a graph's evaluation).
    for path in args.json.iter().chain(&args.plot) {
        if let Some(dir) = path.parent().filter(|d| !d.as_os_str().is_empty())
            && !dir.is_dir()
        {
            eprintln!(
                "error: cannot write {}: the folder {} does not exist",
                path.display(),
                dir.display()
            );
            return ExitCode::from(FAILED);
        }
    }
    let gltf = matches!(
        args.input
            .extension()
            .and_then(|e| e.to_str())
            .map(str::to_ascii_lowercase)
            .as_deref(),
        Some("gltf" | "glb")
    );
    let read = if gltf {
        from_character(args)
    } else {
        from_graph(registry, args, color)
    };
    let (motion, source) = match read {
        Ok(x) => x,
        Err(e) => {
            eprintln!("error: {e}");
            return ExitCode::from(FAILED);
        }
    };
    let report = audit(&motion, &Limits::default());
    if let Some(path) = &args.json
        && let Err(e) = write_json(path, &report, &source)
    {
        eprintln!("error: cannot write {}: {e}", path.display());
        return ExitCode::from(FAILED);
    }
    if let Some(path) = &args.plot
        && let Err(e) = plot(path, &motion, &report, &source)
    {
        eprintln!("error: cannot draw {}: {e}", path.display());
        return ExitCode::from(FAILED);
    }
    if !quiet {
        print!("{}", text(&report, &source));
    }
    if report.findings.iter().any(|f| f.severity >= fail_on) {
        ExitCode::from(FINDINGS)
    } else {
        ExitCode::SUCCESS
    }
}

fn write_json(path: &Path, report: &Report, source: &Source) -> Result<(), String> {
    #[derive(serde::Serialize)]
    struct Out<'a> {
        source: &'a Source,
        report: &'a Report,
    }
    let text = serde_json::to_string_pretty(&Out { source, report }).map_err(|e| e.to_string())?;
    // Written beside the target and renamed over it: a reader never sees half a file.
    let mut partial = path.as_os_str().to_owned();
    partial.push(".partial");
    let partial = PathBuf::from(partial);
    let result = std::fs::write(&partial, text.as_bytes()).and_then(|()| std::fs::rename(&partial, path));
    if result.is_err() {
        let _ = std::fs::remove_file(&partial);
    }
    result.map_err(|e| e.to_string())
}

/// The weight curve with the findings shaded.
fn plot(path: &Path, m: &Motion, report: &Report, source: &Source) -> Result<(), String> {
    let dt = 1.0 / m.rate;
    let times: Vec<f64> = (0..m.com.len()).map(|i| i as f64 * dt).collect();
    let weight = implied_weight(m);
    let time_of = |frame: i64| (frame - m.start_frame) as f64 * dt;
    let marked: Vec<heft_formats::plots::Marked> = report
        .findings
        .iter()
        .map(|f| heft_formats::plots::Marked {
            span: (time_of(f.first_frame), time_of(f.last_frame)),
            label: f.kind.words().to_owned(),
            error: f.severity == Severity::Error,
        })
        .collect();
    let title = format!("audit of {} (time from frame {})", source.input, m.start_frame);
    // Drawn beside the target (the same extension, which picks SVG or PNG) and renamed over it:
    // a reader never sees half a picture.
    let ext = path
        .extension()
        .map(|e| e.to_string_lossy().into_owned())
        .unwrap_or_default();
    let partial = path.with_extension(format!("partial.{ext}"));
    let drawn = heft_formats::plots::draw_audit(&partial, &title, &times, &weight, &m.contact, &marked)
        .and_then(|()| std::fs::rename(&partial, path).map_err(|e| e.to_string()));
    if drawn.is_err() {
        let _ = std::fs::remove_file(&partial);
    }
    drawn
}

/// The report as an animator reads it: one finding a line, then a summary.
fn text(report: &Report, source: &Source) -> String {
    let mut out = String::new();
    out.push_str(&format!(
        "audit of {} ({} frames at {} fps, {} kg; centre of mass {}, contact {})\n",
        source.input, report.frames, report.rate, report.mass, source.com, source.contact
    ));
    if !source.unmapped_joints.is_empty() {
        out.push_str(&format!(
            "note: joints with no role in the centre of mass (left out): {}\n",
            source.unmapped_joints.join(", ")
        ));
    }
    for f in &report.findings {
        out.push_str(&format!(
            "{:<7} {} at frames {}..{}: {:.3} {} where physics gives {:.3}: {}. Change: {}.\n",
            f.severity.word(),
            f.kind.words(),
            f.first_frame,
            f.last_frame,
            f.measured,
            f.unit,
            f.expected,
            f.explanation,
            f.change
        ));
    }
    let errors = report.findings.iter().filter(|f| f.severity == Severity::Error).count();
    let warnings = report.findings.len() - errors;
    out.push_str(&format!(
        "{} flight{}, {errors} error{}, {warnings} warning{}\n",
        report.flights.len(),
        if report.flights.len() == 1 { "" } else { "s" },
        if errors == 1 { "" } else { "s" },
        if warnings == 1 { "" } else { "s" },
    ));
    out
}

/// The node and output a `node.port` names, or the only output with the default name.
fn find_port(plan: &check::Plan, named: Option<&str>, default: &str, what: &str) -> Result<(usize, usize), String> {
    let found: Vec<(usize, usize)> = match named {
        Some(np) => {
            let (n, p) = np
                .split_once('.')
                .ok_or_else(|| format!("`{np}` for the {what}: expected node.port"))?;
            let node = plan
                .nodes
                .iter()
                .position(|x| x.name == n)
                .ok_or_else(|| format!("the graph has no node `{n}` (for the {what})"))?;
            let port = plan.nodes[node]
                .ty
                .spec()
                .outputs
                .iter()
                .position(|o| o.name == p)
                .ok_or_else(|| format!("node `{n}` has no output `{p}` (for the {what})"))?;
            vec![(node, port)]
        }
        None => plan
            .nodes
            .iter()
            .enumerate()
            .flat_map(|(i, n)| {
                n.ty.spec()
                    .outputs
                    .iter()
                    .enumerate()
                    .filter(|(_, o)| o.name == default)
                    .map(move |(k, _)| (i, k))
                    .collect::<Vec<_>>()
            })
            .collect(),
    };
    match found.as_slice() {
        [one] => Ok(*one),
        [] => Err(format!(
            "the graph has no output named `{default}`: name the {what} with --{}",
            if default == "contact" { "contact" } else { "com" }
        )),
        many => Err(format!(
            "the graph has {} outputs named `{default}` ({}): choose the {what} with --{}",
            many.len(),
            many.iter()
                .map(|(n, _)| plan.nodes[*n].name.clone())
                .collect::<Vec<_>>()
                .join(", "),
            if default == "contact" { "contact" } else { "com" }
        )),
    }
}

fn from_graph(registry: &Registry, args: &AuditArgs, color: bool) -> Result<(Motion, Source), String> {
    let (graph, problems) =
        read_graph(&args.input).map_err(|e| format!("cannot read the graph file {}: {e}", args.input.display()))?;
    // The whole graph is evaluated (a node with state pre-rolls from the graph's first frame;
    // the graph's bakes and plots keep their ranges) and `--frames` then picks the audited
    // frames.
    let overrides = check::Overrides {
        set: args.set.clone(),
        frames: None,
    };
    let plan = check::check(&graph, problems, registry, &overrides).map_err(|problems| {
        eprint!("{}", heft_runtime::diag::render(&problems, color));
        "the graph has problems (above)".to_owned()
    })?;
    let (cn, cp) = find_port(&plan, args.com.as_deref(), "com_position", "centre of mass")?;
    // Feet named on the command line: positions of vec3 or transform outputs in m.
    let mut foot_ports: Vec<(usize, usize)> = Vec::new();
    for f in &args.foot {
        let (n, k) = find_port(&plan, Some(f), "", "foot")?;
        let o = &plan.nodes[n].ty.spec().outputs[k];
        let kind_ok = matches!(
            o.kind,
            heft_node_sdk::PortKind::Vec3 | heft_node_sdk::PortKind::Transform
        );
        if !kind_ok || o.dimension != heft_node_sdk::Dimension::Length {
            return Err(format!(
                "`{f}` is {} in {}: a foot is a vec3 or transform in m",
                o.kind.name(),
                o.dimension.si_symbol()
            ));
        }
        foot_ports.push((n, k));
    }
    // The contact flag: none when the feet give the contact; else `--contact`, the centre of
    // mass's own node's `contact`, or the graph's only output named so.
    let own_contact = || {
        let outputs = &plan.nodes[cn].ty.spec().outputs;
        outputs.iter().position(|o| o.name == "contact").map(|k| (cn, k))
    };
    let flag = match (&args.contact, foot_ports.is_empty()) {
        (None, false) => None,
        (None, true) => match own_contact() {
            Some(x) => Some(x),
            None => Some(find_port(&plan, None, "contact", "contact")?),
        },
        (Some(named), _) => Some(find_port(&plan, Some(named), "contact", "contact")?),
    };
    let node = &plan.nodes[cn];
    let spec = node.ty.spec();
    let com_spec = &spec.outputs[cp];
    if com_spec.kind != heft_node_sdk::PortKind::Vec3 || com_spec.dimension != heft_node_sdk::Dimension::Length {
        return Err(format!(
            "`{}.{}` is {} in {}: the centre of mass is a vec3 in m",
            node.name,
            com_spec.name,
            com_spec.kind.name(),
            com_spec.dimension.si_symbol()
        ));
    }
    if let Some((n, k)) = flag {
        let o = &plan.nodes[n].ty.spec().outputs[k];
        if o.kind != heft_node_sdk::PortKind::Flag {
            return Err(format!(
                "`{}.{}` is {}: the contact is a flag",
                plan.nodes[n].name,
                o.name,
                o.kind.name()
            ));
        }
    }
    let mass = match args.mass {
        Some(m) => m,
        None => body_mass(&plan, cn).ok_or_else(|| {
            format!(
                "node `{}` has no `body_mass`: give the body mass with --mass",
                node.name
            )
        })?,
    };
    let model = body_model(args.body.as_deref(), BodyModel::Winter)?;
    let evaluation = eval::evaluate(&plan, None).map_err(|e| e.located(&plan))?;
    let body = GraphBody {
        com: (cn, cp),
        contact: flag,
        feet: foot_ports,
        clearance: args.ground_clearance,
        mass,
        model,
    };
    let read = graph_motion(&plan, &evaluation.values, &body);
    let frames = plan.timeline.frames();
    let tl = plan.timeline;
    let (first, count) = match args.frames {
        None => (0, frames),
        Some((a, b)) => {
            let last = tl.start_frame + frames as i64 - 1;
            if a < tl.start_frame || b > last {
                return Err(format!(
                    "--frames {a}..{b} is not inside the graph's frames {}..{last}",
                    tl.start_frame
                ));
            }
            ((a - tl.start_frame) as usize, (b - a + 1) as usize)
        }
    };
    let skeleton_com_difference = read.com_difference[first..first + count]
        .iter()
        .copied()
        .collect::<Option<Vec<f64>>>()
        .map(|d| d.into_iter().fold(0.0, f64::max));
    let motion = read.motion.frames(first, count);
    let source = Source {
        input: args.input.display().to_string(),
        body_model: read.arms.then_some(model.word()),
        skeleton_com_difference,
        com: format!("{}.{}", node.name, com_spec.name),
        contact: match flag {
            Some((n, k)) => format!("{}.{}", plan.nodes[n].name, plan.nodes[n].ty.spec().outputs[k].name),
            None => format!("feet within {} m of their lowest", args.ground_clearance),
        },
        ..Source::default()
    };
    Ok((motion, source))
}

fn body_model(word: Option<&str>, default: BodyModel) -> Result<BodyModel, String> {
    match word {
        None => Ok(default),
        Some(w) => {
            BodyModel::from_word(w).ok_or_else(|| format!("--body `{w}`: one of de-leva-male, de-leva-female, winter"))
        }
    }
}

fn from_character(args: &AuditArgs) -> Result<(Motion, Source), String> {
    let model = body_model(args.body.as_deref(), BodyModel::DeLevaMale)?;
    let mass = args
        .mass
        .ok_or("a glTF character needs its body mass: give it with --mass (kg)")?;
    if !(args.rate.is_finite() && args.rate > 0.0 && args.rate <= 1000.0) {
        return Err(format!(
            "--rate {}: frames per second above 0 and at most 1000",
            args.rate
        ));
    }
    let mut lines: Vec<(String, String)> = Vec::new();
    if let Some(file) = &args.joint_map {
        let text = heft_runtime::read_text(file, heft_runtime::GRAPH_FILE_LIMIT)
            .map_err(|e| format!("cannot read {}: {e}", file.display()))?;
        for (k, line) in text.lines().enumerate() {
            let line = line.split('#').next().unwrap_or("").trim();
            if !line.is_empty() {
                lines.push((format!("{}:{}", file.display(), k + 1), line.to_owned()));
            }
        }
    }
    lines.extend(args.joints.iter().map(|j| ("--joint".to_owned(), j.clone())));
    let overrides = parse_overrides(&lines)?;
    let req = Request {
        clip: args.clip.as_deref().unwrap_or(""),
        axes: if args.z_up { Axes::ZUp } else { Axes::YUp },
        offset: 0.0,
        outside: Outside::Hold,
    };
    let shown = args.input.display().to_string();
    let fail = |e: character::CharacterError| match e.help {
        Some(h) => format!("{}: {} ({h})", shown, e.message),
        None => format!("{}: {}", shown, e.message),
    };
    let probe = character::load(&args.input, &req, &[0.0]).map_err(fail)?;
    let (first, last) = probe.clip_range;
    // Key times are stored as 32-bit floats: a clip of 71 frames at 24 fps ends at 2.9583333,
    // not 71 / 24; a frame within 1e-4 of the end counts.
    let count = ((last - first) * args.rate + 1e-4).floor() as usize + 1;
    let (start, count) = match args.frames {
        Some((a, b)) => {
            let a = a.max(0) as usize;
            let b = (b.max(0) as usize).min(count.saturating_sub(1));
            if a > b {
                return Err(format!("--frames: the clip has frames 0..{}", count.saturating_sub(1)));
            }
            (a, b - a + 1)
        }
        None => (0, count),
    };
    let times: Vec<f64> = (start..start + count).map(|i| i as f64 / args.rate).collect();
    let ch = character::load(&args.input, &req, &times).map_err(fail)?;
    let skeleton = skeleton_of(&ch);
    let reading = Reading {
        model,
        overrides,
        start_frame: start as i64,
        rate: args.rate,
        mass,
        clearance: args.ground_clearance,
    };
    let read = skeleton.motion(&reading).map_err(|missing| {
        format!(
            "{shown}: no joint plays the role of {}: map them with --joint NAME=ROLE",
            missing.iter().map(|r| format!("{r:?}")).collect::<Vec<_>>().join(", ")
        )
    })?;
    let source = Source {
        input: shown,
        com: format!("the skeleton, {}", model.word()),
        contact: format!("feet within {} m of their lowest", args.ground_clearance),
        body_model: Some(model.word()),
        unmapped_joints: read.unmapped,
        skeleton_com_difference: None,
    };
    Ok((read.motion, source))
}

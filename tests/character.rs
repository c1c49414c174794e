//! A glTF character as the motion source, end to end through the `heft` binary: joints wired
//! by name, strands hung from bones, and the bake read back with the `gltf` crate (a
//! general-purpose reader heft's writer does not use), composed here from the file's own
//! node hierarchy and compared with the run's CSV output.

use std::collections::HashMap;
use std::path::Path;

use heft_integration_tests::{heft, read_csv, workspace_root};

type M4 = [[f64; 4]; 4];

/// A bake's translation, rotation and scale channels, per node, sampled per frame.
type Channels<'a> = (
    &'a HashMap<usize, Vec<[f32; 3]>>,
    &'a HashMap<usize, Vec<[f32; 4]>>,
    &'a HashMap<usize, Vec<[f32; 3]>>,
);

fn trs(t: [f32; 3], r: [f32; 4], s: [f32; 3]) -> M4 {
    let [x, y, z, w] = r.map(f64::from);
    let rm = [
        [
            1.0 - 2.0 * (y * y + z * z),
            2.0 * (x * y - z * w),
            2.0 * (x * z + y * w),
        ],
        [
            2.0 * (x * y + z * w),
            1.0 - 2.0 * (x * x + z * z),
            2.0 * (y * z - x * w),
        ],
        [
            2.0 * (x * z - y * w),
            2.0 * (y * z + x * w),
            1.0 - 2.0 * (x * x + y * y),
        ],
    ];
    let mut m = [[0.0; 4]; 4];
    for i in 0..3 {
        for j in 0..3 {
            m[i][j] = rm[i][j] * f64::from(s[j]);
        }
        m[i][3] = f64::from(t[i]);
    }
    m[3][3] = 1.0;
    m
}

fn mul(a: &M4, b: &M4) -> M4 {
    let mut m = [[0.0; 4]; 4];
    for i in 0..4 {
        for j in 0..4 {
            m[i][j] = (0..4).map(|k| a[i][k] * b[k][j]).sum();
        }
    }
    m
}

/// A bake read back: per node its name, parent, extras, and its world matrix per frame.
struct Baked {
    names: Vec<String>,
    parents: Vec<Option<usize>>,
    extras: Vec<serde_json::Value>,
    world: Vec<Vec<M4>>,
    skins: usize,
}

fn read_bake(path: &Path) -> Baked {
    let (doc, buffers, _) = gltf::import(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    let n = doc.nodes().len();
    let mut parents = vec![None; n];
    for node in doc.nodes() {
        for c in node.children() {
            parents[c.index()] = Some(node.index());
        }
    }
    let anim = doc.animations().next().expect("one clip");
    let mut frames = 0;
    let mut t: HashMap<usize, Vec<[f32; 3]>> = HashMap::new();
    let mut r: HashMap<usize, Vec<[f32; 4]>> = HashMap::new();
    let mut s: HashMap<usize, Vec<[f32; 3]>> = HashMap::new();
    for ch in anim.channels() {
        let reader = ch.reader(|b| Some(&buffers[b.index()]));
        frames = reader.read_inputs().expect("times").count();
        let i = ch.target().node().index();
        match reader.read_outputs().expect("values") {
            gltf::animation::util::ReadOutputs::Translations(v) => {
                t.insert(i, v.collect());
            }
            gltf::animation::util::ReadOutputs::Rotations(v) => {
                r.insert(i, v.into_f32().collect());
            }
            gltf::animation::util::ReadOutputs::Scales(v) => {
                s.insert(i, v.collect());
            }
            gltf::animation::util::ReadOutputs::MorphTargetWeights(_) => {}
        }
    }
    // Parents are not assumed to come before children: resolved recursively.
    let nodes: Vec<gltf::Node<'_>> = doc.nodes().collect();
    let mut world: Vec<Vec<M4>> = vec![Vec::new(); n];
    fn resolve(i: usize, f: usize, nodes: &[gltf::Node<'_>], parents: &[Option<usize>], tr: Channels<'_>) -> M4 {
        let (rt, rr, rs) = nodes[i].transform().decomposed();
        let local = trs(
            tr.0.get(&i).map_or(rt, |v| v[f]),
            tr.1.get(&i).map_or(rr, |v| v[f]),
            tr.2.get(&i).map_or(rs, |v| v[f]),
        );
        match parents[i] {
            Some(p) => mul(&resolve(p, f, nodes, parents, tr), &local),
            None => local,
        }
    }
    for (i, w) in world.iter_mut().enumerate() {
        *w = (0..frames)
            .map(|f| resolve(i, f, &nodes, &parents, (&t, &r, &s)))
            .collect();
    }
    Baked {
        names: doc.nodes().map(|n| n.name().unwrap_or_default().to_owned()).collect(),
        parents,
        extras: {
            let json = glb_json(path);
            (0..n).map(|i| json["nodes"][i]["extras"].clone()).collect()
        },
        world,
        skins: doc.skins().count(),
    }
}

/// The JSON chunk of a .glb file (the `gltf` crate is built without extras).
fn glb_json(path: &Path) -> serde_json::Value {
    let bytes = std::fs::read(path).expect("read");
    let len = u32::from_le_bytes(bytes[12..16].try_into().expect("4 bytes")) as usize;
    serde_json::from_slice(&bytes[20..20 + len]).expect("json chunk")
}

/// heft's Z-up world to glTF's Y-up: (x, y, z) -> (x, z, -y).
fn y_up(p: [f64; 3]) -> [f64; 3] {
    [p[0], p[2], -p[1]]
}

fn run(graph: &Path, out: &Path) {
    let o = heft()
        .arg("run")
        .arg(graph)
        .arg("--out")
        .arg(out)
        .output()
        .expect("runs");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
}

/// graphs/juno.graph: the chains' joints, composed from the bake's own hierarchy (under
/// Juno's bones, with her animated skeleton), land on the CSV positions within 1e-5 m; her
/// head bone lands on `juno.head`; every chain hangs under the bone its strand is pinned to.
#[test]
fn juno_bake_hangs_under_her_bones_and_matches_the_run() {
    juno_bake_matches_the_run(&[]);
}

/// The same with her file read as if it were Z up already (`axes = z_up`): the bake turns her
/// scene by the opposite of the usual quarter turn, and everything still lands where the run
/// says.
#[test]
fn a_z_up_character_bakes_where_the_run_says() {
    juno_bake_matches_the_run(&["--set", "juno.axes=z_up"]);
}

fn juno_bake_matches_the_run(extra: &[&str]) {
    let tmp = tempfile::tempdir().expect("temp");
    let out = tmp.path();
    let o = heft()
        .arg("run")
        .arg(workspace_root().join("graphs/juno.graph"))
        .arg("--out")
        .arg(out)
        .args(extra)
        .output()
        .expect("runs");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    // The example is clean: no warning (a pin inside a collider, a settled shape inside one).
    assert!(o.stderr.is_empty(), "{}", String::from_utf8_lossy(&o.stderr));
    let bake = read_bake(&out.join("juno_hair.glb"));
    assert_eq!(bake.skins, 2, "a skin per chain");
    for name in &bake.names {
        assert!(
            !name.is_empty() && name.chars().all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-'),
            "`{name}` is a name every tool accepts"
        );
    }
    let idx = |name: &str| {
        bake.names
            .iter()
            .position(|n| n == name)
            .unwrap_or_else(|| panic!("{name}"))
    };
    // Chains hang under her bones, through the node that cancels the bone's scale.
    for (series, bone) in [("ponytail_positions", "head"), ("necklace_positions", "chest")] {
        let root = idx(&format!("{series}_s0_j0"));
        let holder = bake.parents[root].expect("a chain is never a scene root");
        assert_eq!(bake.parents[holder], Some(idx(bone)), "{series} under {bone}");
    }
    let mut compared = 0;
    let mut worst = 0.0f64;
    for (csv, series) in [
        ("ponytail.csv", "ponytail.positions"),
        ("necklace.csv", "necklace.positions"),
    ] {
        let (_, rows) = read_csv(&out.join(csv));
        // The bake leaves the pre-roll out: its frame 0 is the run's frame 0.
        let rows: Vec<&Vec<f64>> = rows.iter().filter(|r| r[0] >= 0.0).collect();
        for (i, extras) in bake.extras.iter().enumerate() {
            if extras["heft"]["series"] != series {
                continue;
            }
            let p = extras["heft"]["point"].as_u64().expect("point") as usize;
            for (f, row) in rows.iter().enumerate() {
                let want = y_up([row[2 + 3 * p], row[3 + 3 * p], row[4 + 3 * p]]);
                let m = bake.world[i][f];
                for k in 0..3 {
                    let e = (m[k][3] - want[k]).abs();
                    worst = worst.max(e);
                    assert!(
                        e < 1e-5,
                        "{series} point {p} frame {f}: {:?} vs {want:?}",
                        [m[0][3], m[1][3], m[2][3]]
                    );
                }
                compared += 1;
            }
        }
    }
    assert_eq!(compared, 49 * (13 + 21), "every joint at every frame");
    // Her head bone in the bake is the run's `juno.head`.
    let (_, head) = read_csv(&out.join("juno.head.csv"));
    let h = idx("head");
    for (f, row) in head.iter().filter(|r| r[0] >= 0.0).enumerate() {
        let want = y_up([row[2], row[3], row[4]]);
        for (k, w) in want.iter().enumerate() {
            assert!((bake.world[h][f][k][3] - w).abs() < 1e-5, "head frame {f}");
        }
    }
    eprintln!("{compared} joint-frames compared, worst {worst:e} m");
}

fn column(m: &M4, j: usize) -> [f64; 3] {
    let v = [m[0][j], m[1][j], m[2][j]];
    let n = (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt();
    v.map(|c| c / n)
}

fn cross(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}

fn dot(a: [f64; 3], b: [f64; 3]) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

/// The twist in degrees of a joint between two frames: the turn about its new +Y of its X axis
/// beyond the old X axis carried along by the shortest arc between the old and new +Y (what
/// the strand's swing alone would do to it). Rodrigues' rotation formula carries the axis.
fn twist_deg(a: &M4, b: &M4) -> f64 {
    let (ya, yb, xa, xb) = (column(a, 1), column(b, 1), column(a, 0), column(b, 0));
    let axis = cross(ya, yb);
    let (s, c) = ((dot(axis, axis)).sqrt(), dot(ya, yb));
    let carried = if s < 1e-12 {
        xa
    } else {
        let k = axis.map(|v| v / s);
        let kx = cross(k, xa);
        let kd = dot(k, xa);
        [0, 1, 2].map(|i| xa[i] * c + kx[i] * s + k[i] * kd * (1.0 - c))
    };
    dot(cross(carried, xb), yb).atan2(dot(carried, xb)).to_degrees().abs()
}

/// The angle of the rotation taking the frame of `a` to that of `b` (world transforms; their
/// columns normalised, so a scale does not count), degrees.
fn turn_deg(a: &M4, b: &M4) -> f64 {
    let unit = |m: &M4, k: usize| {
        let c = column(m, k);
        let n = dot(c, c).sqrt();
        c.map(|v| v / n)
    };
    // trace(B A^T) = 1 + 2 cos(angle), with A and B the rotations.
    let trace: f64 = (0..3).map(|k| dot(unit(a, k), unit(b, k))).sum();
    ((trace - 1.0) / 2.0).clamp(-1.0, 1.0).acos().to_degrees()
}

/// Joint frames do not flip. Between consecutive frames, the twist of a joint about its own
/// axis beyond what its swing carries stays under 10 degrees wherever the joint swings by less
/// than 30 degrees: for the root joint of every chain (beyond the turn of its anchor since the
/// frame before, which the root takes: Juno's head is keyed STEP, and jumps), and for every
/// joint of Odile's braid.
/// The shortest-arc frames this replaces spun a braid root by 130 degrees and flipped skirt
/// joints by 180 while hanging almost still. Further along a chain that whips or kinks (the
/// necklaces, which have no bending stiffness; skirt strips on landing; Juno's ponytail on
/// landing), transport along the chain drags twist from the kink to the joints beyond it:
/// those figures are printed, not bounded here.
#[test]
fn chain_joints_do_not_flip() {
    for (graph, file) in [
        ("graphs/jump.graph", "odile.glb"),
        ("graphs/juno.graph", "juno_hair.glb"),
    ] {
        let tmp = tempfile::tempdir().expect("temp");
        run(&workspace_root().join(graph), tmp.path());
        let bake = read_bake(&tmp.path().join(file));
        let mut worst: HashMap<String, (f64, String)> = HashMap::new();
        let mut checked = 0;
        for (i, extras) in bake.extras.iter().enumerate() {
            let Some(series) = extras["heft"]["series"].as_str() else {
                continue;
            };
            if extras["heft"]["point"].is_null() {
                continue;
            }
            let braid = series.starts_with("braid.");
            let root = bake.names[i].ends_with("_j0");
            let group = if braid || root {
                "chain roots and the braid"
            } else {
                series
            };
            for f in 1..bake.world[i].len() {
                let (a, b) = (&bake.world[i][f - 1], &bake.world[i][f]);
                let swing = dot(column(a, 1), column(b, 1)).clamp(-1.0, 1.0).acos().to_degrees();
                if swing >= 30.0 {
                    continue;
                }
                // A root joint takes its anchor's turn since the frame before (the bake's rule):
                // that much twist is the anchor's, not a flip.
                let turn = match (root, bake.parents[i]) {
                    (true, Some(p)) => turn_deg(&bake.world[p][f - 1], &bake.world[p][f]),
                    _ => 0.0,
                };
                let d = twist_deg(a, b) - turn;
                checked += 1;
                let w = worst
                    .entry(group.to_owned())
                    .or_insert((0.0, "no frame (every twist within the anchor's turn)".to_owned()));
                if d > w.0 {
                    *w = (
                        d,
                        format!(
                            "{} frame {f} (swing {swing:.1} deg, anchor turn {turn:.1} deg)",
                            bake.names[i]
                        ),
                    );
                }
            }
        }
        for (group, (d, at)) in &worst {
            eprintln!("{graph}: {group}: largest twist between frames {d:.3} deg at {at}");
        }
        let (d, at) = &worst["chain roots and the braid"];
        assert!(checked > 1000);
        assert!(*d < 10.0, "{graph}: {d:.1} deg at {at}");
    }
}

/// A joint name that is not in the file is an error at its place with the closest names.
#[test]
fn unknown_joint_names_the_place_and_suggests() {
    let tmp = tempfile::tempdir().expect("temp");
    let graph = tmp.path().join("typo.graph");
    let glb = workspace_root().join("data/juno.glb");
    std::fs::write(
        &graph,
        format!(
            "format 1\nrate 24 fps\nframes 0..10\njuno = track.character\n    file = \"{}\"\n    clip = jump\n\
             braid = strand.verlet\njuno.haed -> braid.anchor\n",
            glb.display()
        ),
    )
    .expect("write");
    let o = heft().arg("check").arg(&graph).output().expect("runs");
    assert_eq!(o.status.code(), Some(1));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("typo.graph:8:6") && err.contains("did you mean `head`?"),
        "{err}"
    );
}

/// `character = juno`: the bake is Juno's own file with the strands added. Everything of hers
/// is still there (her mesh, skin, material, both clips with all their channels, her nodes
/// unchanged), the chains hang under her head and chest bones, and her `jump` clip carries the
/// chains' channels keyed at the clip's own times. (Where three.js puts the joints when it
/// plays the file is checked against the CSV in tests/clients.)
#[test]
fn a_bake_into_the_characters_own_file_keeps_everything_of_hers() {
    let tmp = tempfile::tempdir().expect("temp");
    run(&workspace_root().join("graphs/juno.graph"), tmp.path());
    let theirs = glb_json(&workspace_root().join("data/juno.glb"));
    let ours = glb_json(&tmp.path().join("juno_with_hair.glb"));
    for key in ["meshes", "materials"] {
        assert_eq!(ours[key], theirs[key], "{key} copied through");
    }
    let their_nodes = theirs["nodes"].as_array().expect("nodes");
    let our_nodes = ours["nodes"].as_array().expect("nodes");
    assert_eq!(
        our_nodes.len(),
        their_nodes.len() + 2 + 13 + 21,
        "her nodes, a holder per chain, the joints"
    );
    for (i, n) in their_nodes.iter().enumerate() {
        assert_eq!(our_nodes[i]["name"], n["name"]);
        for key in ["translation", "rotation", "scale", "mesh", "skin"] {
            assert_eq!(our_nodes[i][key], n[key], "node {i} {key}");
        }
    }
    assert_eq!(
        ours["skins"].as_array().map(Vec::len),
        Some(1 + 2),
        "her skin and one per chain"
    );
    assert_eq!(ours["skins"][0], theirs["skins"][0]);
    let clips = ours["animations"].as_array().expect("clips");
    assert_eq!(clips.len(), 2, "both of her clips");
    let jump = clips.iter().position(|c| c["name"] == "jump").expect("jump");
    let theirs_jump = &theirs["animations"][jump]["channels"];
    let n_theirs = theirs_jump.as_array().map_or(0, Vec::len);
    assert_eq!(
        clips[jump]["channels"].as_array().map(Vec::len),
        Some(n_theirs + 2 * (13 + 21) + 2)
    );
    assert_eq!(ours["asset"]["extras"]["heft"]["clip"], jump);
    // The chains' keys are at her clip's times: frame k at k / 24 s.
    let (doc, buffers, _) = gltf::import(tmp.path().join("juno_with_hair.glb")).expect("reads");
    let acc = ours["asset"]["extras"]["heft"]["time_accessor"]
        .as_u64()
        .expect("time accessor") as usize;
    let times: Vec<f32> = doc
        .animations()
        .nth(jump)
        .expect("jump")
        .channels()
        .find(|c| c.sampler().input().index() == acc)
        .expect("a heft channel")
        .reader(|b| Some(&buffers[b.index()]))
        .read_inputs()
        .expect("times")
        .collect();
    assert_eq!(times.len(), 49);
    for (k, t) in times.iter().enumerate() {
        assert_eq!(*t, (k as f64 / 24.0) as f32);
    }
    let idx = |name: &str| our_nodes.iter().position(|n| n["name"] == name).expect(name);
    for (root, bone) in [
        ("ponytail_positions_s0_j0", "head"),
        ("necklace_positions_s0_j0", "chest"),
    ] {
        let holder = our_nodes
            .iter()
            .position(|n| {
                n["children"]
                    .as_array()
                    .is_some_and(|c| c.contains(&json_index(idx(root))))
            })
            .expect("a holder");
        assert!(
            our_nodes[idx(bone)]["children"]
                .as_array()
                .is_some_and(|c| c.contains(&json_index(holder))),
            "{root} under {bone}"
        );
    }
}

fn json_index(i: usize) -> serde_json::Value {
    serde_json::Value::from(i)
}

/// A joint whose world transform has shear (a non-uniform scale above a rotated child) cannot
/// be carried as a transform: wiring it is an error at its place naming the node and the frame;
/// the other joints of the file still wire.
#[test]
fn a_sheared_joint_is_refused_where_the_graph_uses_it() {
    let tmp = tempfile::tempdir().expect("temp");
    let graph = tmp.path().join("shear.graph");
    let file = workspace_root().join("tests/fixtures/character/shear.gltf");
    std::fs::write(
        &graph,
        format!(
            "format 1\nrate 24 fps\nframes 0..10\nrig = track.character\n    file = \"{}\"\n\
             a = strand.verlet\nb = strand.verlet\nrig.child -> a.anchor\nrig.parent -> b.anchor\n",
            file.display()
        ),
    )
    .expect("write");
    let o = heft().arg("check").arg(&graph).output().expect("runs");
    assert_eq!(o.status.code(), Some(1));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("shear.graph:8:5")
            && err.contains("`child` (`nodes[1]`")
            && err.contains("has shear in its world transform at frame 0"),
        "{err}"
    );
    // One problem only: `parent` itself (scaled along its own axes, no shear) wires.
    assert_eq!(err.matches("× ").count(), 1, "{err}");
}

/// A finely divided strand on fast motion needs finer steps: a 40 cm strand of 512 segments on
/// Juno's head through her jump (against her head, as in graphs/juno.graph).
/// - At 40 substeps with `reruns = 0` it stops with the blow-up error, which names the frame
///   and asks for 80.
/// - At 40 with the default `reruns` (3), the frames where it crumples or blows up run again at
///   80 (or more), the run finishes, a warning names those frames, and the strand stays within
///   1 % of its rest length at every frame (the bound at 256 segments).
/// - At 80 it runs within 1 % with no frame run again.
///
/// README: from 256 segments up, about segments / 6.4 substeps on this motion (measured up to
/// 4096: 640) to need no rerun.
#[test]
fn a_fine_strand_on_her_jump_runs_again_the_frames_that_need_finer_steps() {
    let tmp = tempfile::tempdir().expect("temp");
    let glb = workspace_root().join("data/juno.glb");
    let graph = |substeps: u32, reruns: Option<u32>| {
        let path = tmp.path().join(format!("fine{substeps}_{reruns:?}.graph"));
        let reruns = reruns.map(|r| format!("    reruns = {r}\n")).unwrap_or_default();
        std::fs::write(
            &path,
            format!(
                "format 1\nrate 24 fps\nframes -24..48\njuno = track.character\n    file = \"{}\"\n    clip = jump\n    \
                 outside = hold\nhair = xpbd.strand\n    start = settled\n    length = 40 cm\n    segments = 512\n    \
                 substeps = {substeps}\n{reruns}    start_offset = (0, 11, 12) cm\njuno.head -> hair.anchor\n\
                 head = collider.add\n    radius = 10 cm\n    offset = (0, 0, 10) cm\njuno.head -> head.start\n\
                 head.list -> hair.colliders\nwrite hair.positions\n",
                glb.display()
            ),
        )
        .expect("write");
        path
    };
    let run_at = |substeps: u32, reruns: Option<u32>| {
        let out = tmp.path().join(format!("out{substeps}_{reruns:?}"));
        let o = heft()
            .arg("run")
            .arg(graph(substeps, reruns))
            .arg("--out")
            .arg(&out)
            .output()
            .expect("runs");
        (o, out)
    };
    // The strand's longest length over the shot, m.
    let longest = |out: &std::path::Path| {
        let (header, rows) = read_csv(&out.join("hair.positions.csv"));
        assert_eq!(header.len(), 2 + 3 * 513);
        assert_eq!(rows.len(), 73);
        rows.iter()
            .map(|r| {
                let p: Vec<&[f64]> = r[2..].chunks_exact(3).collect();
                p.windows(2)
                    .map(|w| {
                        ((w[1][0] - w[0][0]).powi(2) + (w[1][1] - w[0][1]).powi(2) + (w[1][2] - w[0][2]).powi(2)).sqrt()
                    })
                    .sum::<f64>()
            })
            .fold(0.0f64, f64::max)
    };
    let (o, _) = run_at(40, Some(0));
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(
        err.contains("fine40_Some(0).graph:8:1") && err.contains("blew up at frame") && err.contains("at least 80"),
        "{err}"
    );
    let (o, out) = run_at(40, None);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(0), "{err}");
    assert!(
        err.contains("node `hair`")
            && err.contains("went wrong at the 40 substeps given")
            && err.contains("ran again from their start with more")
            && err.contains("at 80"),
        "{err}"
    );
    let worst = longest(&out);
    assert!(worst < 0.404, "the strand reaches {worst} m of its 0.4 m");
    eprintln!("512 segments at 40 substeps, frames run again: longest {worst:.5} m of 0.4 m\n{err}");
    let (o, out) = run_at(80, None);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(0), "{err}");
    assert!(!err.contains("ran again"), "{err}");
    let worst = longest(&out);
    assert!(worst < 0.404, "the strand reaches {worst} m of its 0.4 m");
    eprintln!("512 segments at 80 substeps: longest {worst:.5} m of 0.4 m");
}

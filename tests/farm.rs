//! The render farm, for real: tests/farm/run.sh starts a one-node Slurm cluster on loopback
//! (installing Slurm and munge from Debian's packages when they are missing), submits the
//! README's job-array sweep (examples/farm/odile_sweep.sbatch) as four tasks over three points,
//! and runs the same sweep whole. Checked here: every point ran exactly once (one folder each,
//! its run.json recording the values it ran with), every shard's table has the same header
//! (the task with no point too), and the shard tables concatenate to the whole sweep's table
//! (same header, same rows, byte for byte, once sorted by point).

use std::path::Path;
use std::process::Command;

use heft_integration_tests::{plugin_dir, run_parameter, workspace_root};

fn lines(path: &Path) -> Vec<String> {
    std::fs::read_to_string(path)
        .unwrap_or_else(|e| panic!("{}: {e}", path.display()))
        .lines()
        .map(str::to_owned)
        .collect()
}

#[test]
fn a_job_array_sweep_on_slurm_matches_the_whole_sweep() {
    let out = tempfile::tempdir().expect("temp dir");
    let heft = plugin_dir().join(format!("heft{}", std::env::consts::EXE_SUFFIX));
    let o = Command::new("bash")
        .arg(workspace_root().join("tests/farm/run.sh"))
        .arg(&heft)
        .arg(out.path())
        .env_remove("HEFT_PLUGIN_PATH")
        .output()
        .expect("runs bash");
    assert!(
        o.status.success(),
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    );
    let (sharded, whole) = (out.path().join("sharded"), out.path().join("whole"));
    let whole_table = lines(&whole.join("sweep.csv"));
    let header = &whole_table[0];
    let mut rows: Vec<String> = Vec::new();
    for task in 0..4 {
        let table = lines(&sharded.join(format!("sweep-shard-{task}-of-4.csv")));
        assert_eq!(&table[0], header, "task {task}'s header");
        rows.extend(table[1..].iter().cloned());
    }
    let index = |row: &String| {
        row.split(',')
            .next()
            .and_then(|p| p.parse::<usize>().ok())
            .expect("a point")
    };
    rows.sort_by_key(index);
    let mut want = whole_table[1..].to_vec();
    want.sort_by_key(index);
    assert_eq!(rows, want, "the shard tables concatenate to the whole table");
    assert_eq!(rows.iter().map(index).collect::<Vec<_>>(), [0, 1, 2], "each point once");
    for row in &rows {
        let cells: Vec<&str> = row.split(',').collect();
        let folder = sharded.join(cells[1]);
        let speed = run_parameter(&folder, "odile", "takeoff_speed");
        assert_eq!(speed.to_string(), cells[2], "{}", folder.display());
    }
    let folders = std::fs::read_dir(&sharded)
        .expect("sharded")
        .filter(|e| e.as_ref().is_ok_and(|e| e.path().is_dir()))
        .count();
    assert_eq!(folders, 3, "one folder per point");
}

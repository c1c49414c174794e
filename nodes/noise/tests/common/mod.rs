//! Running a node directly, without the plugin boundary.
#![allow(dead_code)]

use heft_node_sdk::{Io, Node, NodeError, ParamValue, Params, Series, Timeline};

/// `frames` frames from `start` at `fps` frames per second.
pub fn timeline(start: i64, frames: u64, fps: u32) -> Timeline {
    Timeline {
        start_frame: start,
        frame_count: frames,
        rate_num: fps,
        rate_den: 1,
    }
}

/// What one evaluation produced.
#[derive(Debug)]
pub struct Run {
    pub outputs: Vec<Vec<f64>>,
    pub warnings: Vec<String>,
    pub summaries: Vec<f64>,
}

/// Evaluates node `N` with its defaults changed by `set`, on `inputs` (one slice per
/// declared input; empty for an unconnected optional input).
pub fn run<N: Node>(tl: Timeline, set: &[(&str, ParamValue)], inputs: &[&[f64]]) -> Result<Run, NodeError> {
    let spec = N::spec();
    let mut params = Params::defaults(&spec)?;
    for (name, value) in set {
        params = params.with(name, value.clone())?;
    }
    let in_widths: Vec<usize> = spec
        .inputs
        .iter()
        .map(|p| p.kind.width(p.points.unwrap_or(0)))
        .collect();
    let points = N::output_points(&params, &in_widths)?;
    let widths: Vec<usize> = spec
        .outputs
        .iter()
        .zip(&points)
        .map(|(p, n)| p.kind.width(*n))
        .collect();
    let frames = tl.frames();
    let mut buffers: Vec<Vec<f64>> = widths.iter().map(|w| vec![f64::NAN; w * frames]).collect();
    let series: Vec<Series<'_>> = inputs.iter().zip(&in_widths).map(|(d, w)| Series::new(d, *w)).collect();
    let (warnings, summaries) = {
        let outs: Vec<&mut [f64]> = buffers.iter_mut().map(|b| b.as_mut_slice()).collect();
        let mut io = Io::new(tl, &spec, series, outs, widths.clone());
        N::evaluate(&params, &mut io)?;
        (io.warnings().to_vec(), io.summaries().to_vec())
    };
    Ok(Run {
        outputs: buffers,
        warnings,
        summaries,
    })
}

/// A still transform, translation `t` and rotation `q`, for `frames` frames.
pub fn still(t: [f64; 3], q: [f64; 4], frames: usize) -> Vec<f64> {
    (0..frames)
        .flat_map(|_| [t[0], t[1], t[2], q[0], q[1], q[2], q[3]])
        .collect()
}

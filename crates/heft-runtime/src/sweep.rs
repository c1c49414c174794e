//! Parameter sweeps: a grid of `--vary node.param=A..B:N` axes, each point a full run with
//! the axis values as `--set` overrides. `--shard I/N` keeps the points whose index modulo N
//! is I, so the shards of a batch scheduler's job array split a sweep without talking to
//! each other.

/// One varied parameter: `node.param` and its values as graph value texts (`0.3 m`).
#[derive(Debug, Clone, PartialEq)]
pub struct Axis {
    /// `node.param`.
    pub target: String,
    /// The values, as written in a graph (`30 cm`).
    pub values: Vec<String>,
}

/// Parses `node.param=A..B:N`: N evenly spaced values from A to B inclusive. A unit written
/// after B alone applies to A too (`30..50 cm:3` is 30 cm, 40 cm, 50 cm).
pub fn parse_axis(text: &str) -> Result<Axis, String> {
    let (target, range) = text.split_once('=').ok_or("expected `node.param=A..B:N`")?;
    if !target.contains('.') {
        return Err(format!("`{target}` is not `node.param`"));
    }
    let (span, count) = range
        .rsplit_once(':')
        .ok_or("expected `:N` after the range, the number of values")?;
    let n: usize = count
        .trim()
        .parse()
        .map_err(|_| format!("`{count}` is not a whole number of values"))?;
    if n < 1 {
        return Err("a sweep axis needs at least 1 value".into());
    }
    if n > MAX_POINTS {
        return Err(format!("{n} values: a sweep runs at most {MAX_POINTS} points"));
    }
    let (a, b) = span.split_once("..").ok_or("expected a range `A..B`")?;
    let split = |s: &str| -> Result<(f64, String), String> {
        let s = s.trim();
        let end = s
            .char_indices()
            .find(|(i, c)| {
                !(c.is_ascii_digit() || *c == '.' || *c == '-' || *c == '+' || ((*c == 'e' || *c == 'E') && *i > 0))
            })
            .map_or(s.len(), |(i, _)| i);
        let v: f64 = s[..end]
            .parse()
            .map_err(|_| format!("`{s}` does not start with a number"))?;
        Ok((v, s[end..].trim().to_owned()))
    };
    let (va, ua) = split(a)?;
    let (vb, ub) = split(b)?;
    let unit = match (ua.as_str(), ub.as_str()) {
        ("", u) | (u, "") => u.to_owned(),
        (x, y) if x == y => x.to_owned(),
        (x, y) => return Err(format!("the range's ends have different units, `{x}` and `{y}`")),
    };
    let values = (0..n)
        .map(|k| {
            // Weighted ends: both ends exact, the middle as exact as the sum allows.
            let v = if n == 1 {
                va
            } else {
                (va * (n - 1 - k) as f64 + vb * k as f64) / (n - 1) as f64
            };
            // 12 significant digits: 2.2..2.6:3 gives 2.4, not 2.4000000000000004.
            let v: f64 = format!("{v:.11e}").parse().unwrap_or(v);
            if unit.is_empty() {
                format!("{v}")
            } else {
                format!("{v} {unit}")
            }
        })
        .collect();
    Ok(Axis {
        target: target.trim().to_owned(),
        values,
    })
}

/// Parses `I/N` with 0 <= I < N.
pub fn parse_shard(text: &str) -> Result<(usize, usize), String> {
    let (i, n) = text.split_once('/').ok_or("expected `I/N`, e.g. 0/8")?;
    let i: usize = i.trim().parse().map_err(|_| format!("`{i}` is not a whole number"))?;
    let n: usize = n.trim().parse().map_err(|_| format!("`{n}` is not a whole number"))?;
    if n == 0 || i >= n {
        return Err(format!("shard {i}/{n}: I must be at least 0 and less than N"));
    }
    Ok((i, n))
}

/// The most points one sweep runs.
pub const MAX_POINTS: usize = 100_000;

/// The number of grid points, or why the grid is too large ([`MAX_POINTS`]).
pub fn grid_size(axes: &[Axis]) -> Result<usize, String> {
    let total = axes.iter().try_fold(1usize, |t, a| {
        t.checked_mul(a.values.len()).filter(|&t| t <= MAX_POINTS)
    });
    total.ok_or_else(|| {
        let sizes: Vec<String> = axes.iter().map(|a| a.values.len().to_string()).collect();
        format!(
            "the grid of {} points is larger than the {MAX_POINTS} a sweep runs: vary fewer values, or split the sweep",
            sizes.join(" x ")
        )
    })
}

/// Every grid point (the last axis varies fastest), as (index, one value per axis); the grid
/// is at most [`MAX_POINTS`] ([`grid_size`]).
pub fn grid(axes: &[Axis]) -> Result<Vec<(usize, Vec<String>)>, String> {
    let total = grid_size(axes)?;
    Ok((0..total)
        .map(|index| {
            let mut rest = index;
            let mut point = vec![String::new(); axes.len()];
            for (k, axis) in axes.iter().enumerate().rev() {
                point[k] = axis.values[rest % axis.values.len()].clone();
                rest /= axis.values.len();
            }
            (index, point)
        })
        .collect())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn axes_spread_values_evenly_with_units() {
        let a = parse_axis("odile.crouch_depth=20..30 cm:3").expect("axis");
        assert_eq!(a.target, "odile.crouch_depth");
        assert_eq!(a.values, ["20 cm", "25 cm", "30 cm"]);
        assert_eq!(
            parse_axis("b.gravity=9.8 m/s^2..9.8 m/s^2:1").expect("axis").values,
            ["9.8 m/s^2"]
        );
        assert!(parse_axis("b.gravity=1 m..2 s:2").is_err());
        assert!(parse_axis("gravity=1..2:2").is_err());
        assert!(parse_axis("b.g=1..2:0").is_err());
    }

    /// A sweep too large to run is refused with the sizes, never wrapped round to an empty
    /// grid ("swept 0 of 0 points") or allocated until the memory runs out.
    #[test]
    fn grids_too_large_are_refused() {
        let e = parse_axis("a.x=1..2:1000000000000").unwrap_err();
        assert!(e.contains("at most 100000 points"), "{e}");
        let big = parse_axis("a.x=1..2:100000").expect("axis");
        let e = grid(&[big.clone(), big.clone(), big]).unwrap_err();
        assert!(
            e.contains("100000 x 100000 x 100000 points is larger than the 100000"),
            "{e}"
        );
        assert_eq!(grid_size(&[parse_axis("a.x=1..2:100000").expect("axis")]), Ok(100_000));
    }

    #[test]
    fn grid_is_row_major_and_shards_partition_it() {
        let axes = [
            parse_axis("a.x=1..2:2").expect("axis"),
            parse_axis("b.y=10..30:3").expect("axis"),
        ];
        let g = grid(&axes).expect("a small grid");
        assert_eq!(g.len(), 6);
        assert_eq!(g[1].1, ["1", "20"]);
        assert_eq!(g[3].1, ["2", "10"]);
        assert_eq!(parse_shard("2/4"), Ok((2, 4)));
        assert!(parse_shard("4/4").is_err());
    }
}

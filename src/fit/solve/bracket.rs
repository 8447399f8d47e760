//! The bracket search that lets Brent's method run without hard-coded bounds: the one-parameter
//! problems are searched in u = ln(parameter).

/// Search range, in ln(parameter): about 1e-4 to 1e4.
pub const LOG_LIMIT: f64 = 9.2;

/// Find (lo, hi) around a minimum of `f`, expanding geometrically from `u0` until the loss rises on
/// both sides. Returns the bracket and the number of steps taken.
pub fn bracket(f: &dyn Fn(f64) -> f64, u0: f64) -> Result<(f64, f64, u64), String> {
    let mut h = 0.1;
    let (mut a, mut b, mut c) = (u0 - h, u0, u0 + h);
    let (mut fa, mut fb, mut fc) = (f(a), f(b), f(c));
    let f0 = fb;
    let mut steps = 0;
    if !(fa.is_finite() && fb.is_finite() && fc.is_finite()) {
        return Err("the loss is not finite at the starting value".to_string());
    }
    while !(fb < fa && fb < fc) {
        steps += 1;
        let end = if a <= -LOG_LIMIT && fa < fb {
            Some((a, fa))
        } else if c >= LOG_LIMIT && fc < fb {
            Some((c, fc))
        } else {
            None
        };
        if let Some((end, f_end)) = end
            && let Some((lo, hi, evals)) = bracket_at_end(f, b, end, f_end)
        {
            return Ok((lo, hi, steps + evals));
        }
        if steps > 200 || a <= -LOG_LIMIT || c >= LOG_LIMIT {
            // Flat where the search stopped is not flat everywhere: a loss that fell all the way to
            // the edge (e.g. every record in run order, so larger exponents always fit better) ends
            // flat once the predictions reach 0 and 1.
            return Err(if fa == fb && fb == fc && fb == f0 {
                "the loss does not change with the parameter (do all teams score as many runs as they allow?)"
                    .to_string()
            } else {
                format!(
                    "the loss keeps falling toward {:.3e}; the data have no interior optimum",
                    if b < u0 { a.exp() } else { c.exp() }
                )
            });
        }
        h *= 1.6;
        if fa <= fc {
            // Downhill to the left: slide the triple left.
            c = b;
            fc = fb;
            b = a;
            fb = fa;
            // Never past the ends, so that a minimum just inside them is still found.
            a = (b - h).max(-LOG_LIMIT);
            fa = f(a);
        } else {
            a = b;
            fa = fb;
            b = c;
            fb = fc;
            c = (b + h).min(LOG_LIMIT);
            fc = f(c);
        }
    }
    Ok((a, c, steps))
}

/// At an end of the search range, still falling toward it (f(end) < f(inner)): halve the interval
/// toward the end until a point lower than the end brackets a minimum between `inner` and the end,
/// or the interval is too short to hold one. Returns the bracket and the evaluations spent.
fn bracket_at_end(
    f: &dyn Fn(f64) -> f64,
    inner: f64,
    end: f64,
    f_end: f64,
) -> Option<(f64, f64, u64)> {
    let mut b = inner;
    for evals in 1..=64 {
        let d = 0.5 * (b + end);
        if f(d) < f_end {
            return Some((b.min(end), b.max(end), evals));
        }
        // f(d) >= f(end) < f(b): a minimum, if any, lies between d and the end.
        if (end - d).abs() < 1e-9 {
            break;
        }
        b = d;
    }
    None
}

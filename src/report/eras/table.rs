//! The era report as a table in the house style, followed by the change test and the recommendation
//! in plain words.

use super::{EraReport, p_value, span as span_text};
use crate::eras::{self, ChangeBy, EraAnalysis, Window, span, span::RULE};
use crate::report::table::new_table;
use crate::report::{num, signed};

/// A value with its standard error: `+0.043 ± 0.051`.
fn with_se(v: f64, se: f64) -> String {
    format!("{} ± {}", signed(v, 3), num(se, 3))
}

fn window_row(w: &Window, with_interval: bool, min_group: usize) -> Vec<String> {
    let mut row = vec![
        span_text(w.first, w.last),
        w.rows.to_string(),
        num(w.runs_per_game, 2),
    ];
    match &w.fit {
        Some(f) => {
            row.extend([num(f.exponent, 3), num(f.std_error, 3)]);
            if with_interval {
                row.push(f.interval.map_or("-".to_string(), |(lo, hi)| {
                    format!("{}–{}", num(lo, 3), num(hi, 3))
                }));
            }
            row.extend([
                num(f.implied_history, 3),
                with_se(f.gap_history, f.gap_history_se),
                num(f.implied_published, 3),
                with_se(f.gap_published, f.gap_published_se),
            ]);
        }
        None => {
            row.push(if w.rows < min_group {
                format!("fewer than {min_group} team-seasons")
            } else {
                "no fit (no informative rows)".to_string()
            });
            let blanks = if with_interval { 6 } else { 5 };
            row.extend(std::iter::repeat_n("-".to_string(), blanks));
        }
    }
    row
}

fn change_lines(a: &EraAnalysis) -> String {
    let Some(c) = &a.change else {
        return format!(
            "change test: not run ({})\n",
            a.change_skipped.as_deref().unwrap_or("no groups")
        );
    };
    let groups = match c.by {
        ChangeBy::Season => format!("one per season ({} seasons)", c.groups),
        ChangeBy::Block => format!("one per {}-season block ({} blocks)", a.window, c.groups),
    };
    let left_out = if c.groups_left_out > 0 {
        format!(
            "; {} {}(s) with fewer than {} team-seasons left out",
            c.groups_left_out,
            c.by.name(),
            a.min_group
        )
    } else {
        String::new()
    };
    let words = if c.rejects {
        format!(
            "the exponent has changed over these seasons: one exponent fits clearly worse than {groups}"
        )
    } else {
        format!(
            "no evidence that the exponent changed: one exponent ({}) fits about as well as {groups}",
            num(c.common_exponent, 3)
        )
    };
    format!(
        "change test: one exponent against {groups}, {} team-seasons{left_out}\n\
         \x20 quasi-likelihood F = {} on {} and {} df (dispersion {}), p {}\n\
         \x20 in plain words, at the {:.0}% level: {words}\n\
         \x20 (a binomial likelihood-ratio test, which ignores the dispersion, would give p {})\n",
        c.rows,
        num(c.f_statistic, 2),
        c.df_change,
        c.df_residual,
        num(c.dispersion, 3),
        p_value(c.p_value),
        c.level * 100.0,
        p_value(c.p_value_binomial),
    )
}

fn recommendation_line(a: &EraAnalysis) -> String {
    let r = &a.recommendation;
    let (Some(c), Some(l)) = (r.chosen(), r.latest.as_ref()) else {
        return format!(
            "recommendation ({RULE}): none; the latest seasons could not be fitted with at least {} team-seasons\n",
            a.min_group
        );
    };
    let why = if r.meets_target {
        format!(
            "the shortest span ending in {} whose exponent is within {} s.e. of the latest {} seasons' and whose s.e. is at most {}",
            c.last,
            span::CONSISTENT_WITHIN,
            l.seasons,
            num(r.target_se, 3)
        )
    } else {
        format!(
            "no span consistent with the latest {} seasons reaches --target-se {}; this one comes closest",
            l.seasons,
            num(r.target_se, 3)
        )
    };
    format!(
        "recommendation ({RULE}): calibrate on {} (±{}), exponent {}\n\
         \x20 {why}; latest {} seasons ({}): {} ± {}\n",
        span_text(c.first, c.last),
        num(c.std_error, 3),
        num(c.exponent, 3),
        l.seasons,
        span_text(l.first, l.last),
        num(l.exponent, 3),
        num(l.std_error, 3),
    )
}

pub fn render(r: &EraReport) -> String {
    let a = &r.analysis;
    let h = &a.history;
    let source = if r.from_games {
        "aggregated from game logs"
    } else {
        "from a team-season table"
    };
    let mut out = format!(
        "runcal eras: {} team-seasons used ({source}), {} rejected, seasons {}; {} {}-season windows, \
         Pythagorean exponent by log-loss\n",
        r.rows_used,
        r.rows_rejected,
        span_text(h.first, h.last),
        a.kind.name(),
        a.window,
    );
    out.push_str(&format!(
        "whole history: exponent {} ± {}; PythagenPat z {} ± {} at {} {} per game (published z {})\n",
        num(h.exponent, 3),
        num(h.exponent_se, 3),
        num(h.z, 4),
        num(h.z_se, 4),
        num(h.runs_per_game, 2),
        r.unit.plural(),
        eras::PUBLISHED_Z
    ));
    let with_interval = a.ci_level.is_some();
    let interval_header = a
        .ci_level
        .map(|l| format!("{:.0}% bootstrap interval", l * 100.0))
        .unwrap_or_default();
    let implied_history = format!("implied by z {}", num(h.z, 3));
    let implied_published = format!("implied by z {}", eras::PUBLISHED_Z);
    let per_game = format!("{}/game", r.unit.plural());
    let mut header = vec![
        "seasons",
        "team-seasons",
        per_game.as_str(),
        "exponent",
        "std. error",
    ];
    if with_interval {
        header.push(&interval_header);
    }
    header.extend([
        implied_history.as_str(),
        "gap ± s.e. (history z)",
        implied_published.as_str(),
        "gap ± s.e. (published z)",
    ]);
    let mut t = new_table(&header, 1);
    for w in &a.windows {
        t.add_row(window_row(w, with_interval, a.min_group));
    }
    out.push_str(&t.to_string());
    out.push('\n');
    out.push_str(
        "std. error: quasi-binomial (binomial × √dispersion); implied: RPG^z (PythagenPat); \
         gap: exponent − implied, what the run environment does not explain\n",
    );
    out.push_str(&change_lines(a));
    out.push_str(&recommendation_line(a));
    out.push_str(eras::CAUTION);
    out.push('\n');
    out
}

//! Charts of the after-action report, drawn with plotters' SVG backend:
//! the worst odds on the ground per tier over time, and the reliability
//! diagram of the calibration section.
//!
//! Colour is never the only carrier: each tier also has its own marker
//! shape and a legend entry in words.

use super::render::tier_title;
use crate::model::Tier;
use crate::report::AfterAction;
use crate::report::after_action::WorstPoint;
use crate::report::calibration::ReliabilityBin;
use chrono::{DateTime, Utc};
use plotters::prelude::*;
use std::path::{Path, PathBuf};

/// Size of every chart, in SVG pixels.
const SIZE: (u32, u32) = (900, 480);

/// File names of the charts inside the chosen directory.
pub const WORST_ODDS_FILE: &str = "worst-odds.svg";
pub const RELIABILITY_FILE: &str = "reliability.svg";

fn tier_colour(tier: Tier) -> RGBColor {
    match tier {
        Tier::Life => RGBColor(190, 30, 45),
        Tier::Stabilization => RGBColor(220, 130, 0),
        Tier::Property => RGBColor(40, 90, 190),
    }
}

fn err<E: std::fmt::Display>(what: &str) -> impl FnOnce(E) -> anyhow::Error + '_ {
    move |e| anyhow::anyhow!("{what}: {e}")
}

fn parse_at(at: &str) -> Option<DateTime<Utc>> {
    DateTime::parse_from_rfc3339(at)
        .ok()
        .map(|t| t.with_timezone(&Utc))
}

/// Step segments of one tier: (minutes, odds) points where the tier has open
/// tasks, holding each value until the next change; a gap (no open task in
/// the tier) ends a segment.
fn tier_segments(
    a: &AfterAction,
    tier: usize,
    x_of: &dyn Fn(&WorstPoint) -> Option<f64>,
    end: f64,
) -> Vec<Vec<(f64, f64)>> {
    let mut segments: Vec<Vec<(f64, f64)>> = Vec::new();
    let mut current: Vec<(f64, f64)> = Vec::new();
    let mut last: Option<f64> = None;
    for p in &a.worst_timeline {
        let Some(x) = x_of(p) else { continue };
        if let Some(prev) = last {
            current.push((x, prev));
        }
        match p.worst[tier] {
            Some(odds) => {
                current.push((x, odds));
                last = Some(odds);
            }
            None => {
                if !current.is_empty() {
                    segments.push(std::mem::take(&mut current));
                }
                last = None;
            }
        }
    }
    if let Some(prev) = last {
        current.push((end, prev));
    }
    if !current.is_empty() {
        segments.push(current);
    }
    segments
}

/// Minutes from `t0` to `t`; never negative, so a log written before times
/// were checked to increase still draws inside the axes.
fn minutes_between(t0: DateTime<Utc>, t: DateTime<Utc>) -> f64 {
    ((t - t0).num_milliseconds() as f64 / 60_000.0).max(0.0)
}

/// The worst odds per tier over time, as SVG text.
pub fn worst_odds_svg(a: &AfterAction) -> anyhow::Result<String> {
    let t0 = parse_at(&a.first_at)
        .ok_or_else(|| anyhow::anyhow!("report: bad first record time {}", a.first_at))?;
    let t_end = parse_at(&a.last_at).unwrap_or(t0);
    // A log written within a minute (a script, a test) would squeeze every
    // change onto one tick: such a log is drawn against its record numbers.
    let by_seq = minutes_between(t0, t_end) < 1.0;
    let x_of = |p: &WorstPoint| -> Option<f64> {
        if by_seq {
            Some(p.seq as f64)
        } else {
            parse_at(&p.at).map(|at| minutes_between(t0, at))
        }
    };
    let end = if by_seq {
        a.records as f64
    } else {
        minutes_between(t0, t_end)
    };
    let (x_min, x_max) = if by_seq {
        (1.0, end.max(2.0) + 0.2)
    } else {
        (0.0, (end * 1.02).max(1.0))
    };
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&WHITE).map_err(err("chart"))?;
        let mut chart = ChartBuilder::on(&root)
            .caption(
                format!("Worst odds on the ground per tier: {}", a.incident),
                ("sans-serif", 20),
            )
            .margin(14)
            .x_label_area_size(48)
            .y_label_area_size(64)
            .build_cartesian_2d(x_min..x_max, 0f64..1.0f64)
            .map_err(err("chart"))?;
        // Clock times for a log of some length; minutes for a short one,
        // where every tick would show the same minute.
        let clock = x_max >= 10.0;
        let x_label = |m: &f64| {
            if by_seq {
                // Records are whole numbers: no label between them.
                if (m - m.round()).abs() < 1e-9 {
                    format!("#{m:.0}")
                } else {
                    String::new()
                }
            } else if clock {
                (t0 + chrono::Duration::milliseconds((m * 60_000.0) as i64))
                    .format("%H:%M")
                    .to_string()
            } else {
                format!("+{m:.1} min")
            }
        };
        let x_desc = if by_seq {
            format!(
                "log record (the whole log was written within a minute of {} UTC)",
                t0.format("%Y-%m-%d %H:%M")
            )
        } else {
            format!("time (UTC); the log opened {}", t0.format("%Y-%m-%d %H:%M"))
        };
        chart
            .configure_mesh()
            .light_line_style(WHITE)
            .x_desc(x_desc)
            .x_labels(if by_seq { (a.records).clamp(2, 12) } else { 10 })
            .y_desc("worst task odds in the tier")
            .x_label_formatter(&x_label)
            .y_label_formatter(&|y| format!("{:.0}%", y * 100.0))
            .draw()
            .map_err(err("chart"))?;
        for tier in Tier::ALL {
            let i = tier.index();
            let colour = tier_colour(tier);
            let segments = tier_segments(a, i, &x_of, end);
            if segments.is_empty() {
                continue;
            }
            let secure = a.secure[i];
            // The secure level: above it the tier no longer outranks those
            // below (SPEC §3).
            chart
                .draw_series(LineSeries::new(
                    [(x_min, secure), (x_max, secure)],
                    colour.mix(0.5).stroke_width(1),
                ))
                .map_err(err("chart"))?;
            for (n, seg) in segments.iter().enumerate() {
                let series = chart
                    .draw_series(LineSeries::new(seg.iter().copied(), colour.stroke_width(3)))
                    .map_err(err("chart"))?;
                if n == 0 {
                    series
                        .label(format!(
                            "{} (secure at {})",
                            tier_title(tier),
                            crate::odds::text::pct(secure)
                        ))
                        .legend(move |(x, y)| {
                            PathElement::new(vec![(x, y), (x + 24, y)], colour.stroke_width(3))
                        });
                }
                // Markers at the changes, one shape per tier.
                let marks = seg.iter().step_by(2).copied();
                match tier {
                    Tier::Life => chart
                        .draw_series(marks.map(|p| Circle::new(p, 4, colour.filled())))
                        .map(|_| ()),
                    Tier::Stabilization => chart
                        .draw_series(marks.map(|p| TriangleMarker::new(p, 5, colour.filled())))
                        .map(|_| ()),
                    Tier::Property => chart
                        .draw_series(marks.map(|p| Cross::new(p, 4, colour.stroke_width(2))))
                        .map(|_| ()),
                }
                .map_err(err("chart"))?;
            }
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::LowerRight)
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .draw()
            .map_err(err("chart"))?;
        root.present().map_err(err("chart"))?;
    }
    Ok(svg)
}

/// The reliability diagram: mean forecast against the observed share of
/// successes per bin, with the diagonal of perfect calibration.
pub fn reliability_svg(a: &AfterAction) -> anyhow::Result<String> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&WHITE).map_err(err("chart"))?;
        let caption = if a.scored_tasks == 0 {
            "Reliability of the odds: no closed task to score yet".to_string()
        } else {
            format!(
                "Reliability of the odds: {} closed task{} scored",
                a.scored_tasks,
                if a.scored_tasks == 1 { "" } else { "s" }
            )
        };
        let mut chart = ChartBuilder::on(&root)
            .caption(caption, ("sans-serif", 20))
            .margin(14)
            .x_label_area_size(48)
            .y_label_area_size(64)
            .build_cartesian_2d(0f64..1.0f64, 0f64..1.0f64)
            .map_err(err("chart"))?;
        chart
            .configure_mesh()
            .light_line_style(WHITE)
            .x_desc("odds given when the task closed (mean per bin)")
            .y_desc("share of those tasks that succeeded")
            .x_label_formatter(&|x| format!("{:.0}%", x * 100.0))
            .y_label_formatter(&|y| format!("{:.0}%", y * 100.0))
            .draw()
            .map_err(err("chart"))?;
        let grey = RGBColor(120, 120, 120);
        chart
            .draw_series(LineSeries::new(
                [(0.0, 0.0), (1.0, 1.0)],
                grey.stroke_width(1),
            ))
            .map_err(err("chart"))?
            .label("perfect calibration")
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 24, y)], grey));
        let blue = RGBColor(40, 90, 190);
        let points: Vec<(f64, f64)> = a.reliability.iter().map(bin_point).collect();
        chart
            .draw_series(LineSeries::new(
                points.iter().copied(),
                blue.stroke_width(2),
            ))
            .map_err(err("chart"))?
            .label("observed (number of tasks beside each bin)")
            .legend(move |(x, y)| {
                PathElement::new(vec![(x, y), (x + 24, y)], blue.stroke_width(2))
            });
        chart
            .draw_series(
                a.reliability
                    .iter()
                    .map(|b| Circle::new(bin_point(b), 5, blue.filled())),
            )
            .map_err(err("chart"))?;
        chart
            .draw_series(a.reliability.iter().map(|b| {
                let (x, y) = bin_point(b);
                // Left of the point near the right edge, so it stays inside.
                let x = if x > 0.9 { x - 0.06 } else { x + 0.012 };
                Text::new(
                    format!("n={}", b.count),
                    (x, (y + 0.03).min(0.97)),
                    ("sans-serif", 13),
                )
            }))
            .map_err(err("chart"))?;
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperLeft)
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .draw()
            .map_err(err("chart"))?;
        root.present().map_err(err("chart"))?;
    }
    Ok(svg)
}

fn bin_point(b: &ReliabilityBin) -> (f64, f64) {
    (b.mean_forecast, b.observed)
}

/// Writes `text` to `dir/name` through a temporary file and a rename, so a
/// failed write never leaves half a chart.
fn write_whole(dir: &Path, name: &str, text: &str) -> anyhow::Result<PathBuf> {
    let path = dir.join(name);
    let tmp = dir.join(format!(".{name}.tmp"));
    std::fs::write(&tmp, text)
        .and_then(|()| std::fs::rename(&tmp, &path))
        .map_err(|e| {
            let _ = std::fs::remove_file(&tmp);
            anyhow::anyhow!("{}: cannot write: {e}", path.display())
        })?;
    Ok(path)
}

/// Draws every chart first, then writes them into `dir` (created if
/// missing). Returns each chart's title and path.
pub fn write_charts(a: &AfterAction, dir: &Path) -> anyhow::Result<Vec<(&'static str, PathBuf)>> {
    let worst = worst_odds_svg(a)?;
    let reliability = reliability_svg(a)?;
    std::fs::create_dir_all(dir)
        .map_err(|e| anyhow::anyhow!("{}: cannot create the directory: {e}", dir.display()))?;
    Ok(vec![
        (
            "Worst odds per tier over time",
            write_whole(dir, WORST_ODDS_FILE, &worst)?,
        ),
        (
            "Reliability diagram",
            write_whole(dir, RELIABILITY_FILE, &reliability)?,
        ),
    ])
}

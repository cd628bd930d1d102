//! Search progress plots: the best validation objective found so far against
//! evaluations (a median line with a quartile band per strategy, or a single
//! run's own line) and against elapsed search seconds (one line per run).
//!
//! Time is per run rather than pooled: runs of one strategy differ in speed,
//! so a median over runs at a common second would mix runs that have finished
//! with runs that are still searching. Each run's line is drawn in its
//! strategy's colour instead.

use super::plot_frame::{
    drawing_failed, group_colour, group_order, group_position, objective_label, padded_range,
    staircase, FONT, INK, PLOT_HEIGHT, PLOT_WIDTH,
};
use crate::stats::quartiles;
use crate::Result;
use plotters::coord::Shift;
use plotters::prelude::*;

/// The best-so-far curves of one group of runs (one strategy over seeds).
#[derive(Debug, Clone, PartialEq)]
pub struct CurveGroup {
    /// The group's name (the strategy), shown in the legend.
    pub name: String,
    /// Per run: `curve[i]` is the best objective among evaluations `1..=i + 1`
    /// (`None` while nothing was scored), as in `RunSummary::best_so_far`.
    pub curves: Vec<Vec<Option<f64>>>,
}

/// One run's best-so-far objective against elapsed search seconds.
#[derive(Debug, Clone, PartialEq)]
pub struct TimedCurve {
    /// The run's group (strategy): it picks the colour.
    pub group: String,
    /// `(seconds, best objective)` at each improvement, in time order.
    pub points: Vec<(f64, f64)>,
    /// Elapsed seconds at the run's last timed evaluation (the line runs until then).
    pub end: f64,
}

/// Median, lower and upper quartile per evaluation, from the first
/// evaluation at which any run has a score. Runs without a score yet at an
/// evaluation are left out of that evaluation's quartiles.
fn quartile_steps(curves: &[Vec<Option<f64>>]) -> Result<Vec<(f64, [f64; 3])>> {
    let longest = curves.iter().map(Vec::len).max().unwrap_or(0);
    let mut steps = Vec::new();
    for position in 0..longest {
        let values: Vec<f64> = curves
            .iter()
            .filter_map(|curve| curve.get(position).copied().flatten())
            .collect();
        if !values.is_empty() {
            steps.push(((position + 1) as f64, quartiles(&values)?));
        }
    }
    Ok(steps)
}

fn column(steps: &[(f64, [f64; 3])], which: usize) -> Vec<(f64, f64)> {
    steps.iter().map(|(x, q)| (*x, q[which])).collect()
}

/// An SVG canvas of the report's plot size writing into `out`.
fn canvas(out: &mut String) -> DrawingArea<SVGBackend<'_>, Shift> {
    SVGBackend::with_string(out, (PLOT_WIDTH, PLOT_HEIGHT)).into_drawing_area()
}

/// A plot holding only its title and a sentence saying why it is empty.
pub(crate) fn empty_plot(title: &str, message: &str) -> Result<String> {
    let mut svg = String::new();
    {
        let root = canvas(&mut svg);
        root.fill(&WHITE).map_err(drawing_failed)?;
        let titled = root
            .titled(title, (FONT, 24).into_font().color(&INK))
            .map_err(drawing_failed)?;
        let style = (FONT, 18)
            .into_font()
            .color(&INK)
            .pos(plotters::style::text_anchor::Pos::new(
                plotters::style::text_anchor::HPos::Center,
                plotters::style::text_anchor::VPos::Center,
            ));
        let (width, height) = titled.dim_in_pixel();
        titled
            .draw(&Text::new(
                message.to_string(),
                (width as i32 / 2, height as i32 / 2),
                style,
            ))
            .map_err(drawing_failed)?;
        root.present().map_err(drawing_failed)?;
    }
    Ok(svg)
}

/// The best validation objective so far against evaluations: per group a
/// median step line over its runs with the band between the quartiles (a
/// group of one run: that run's line alone). Same input, same bytes.
pub fn plot_best_by_evaluation(groups: &[CurveGroup], objective: &str) -> Result<String> {
    let title = "Best score so far, by evaluation";
    let mut drawn = Vec::new();
    for group in groups {
        drawn.push((group, quartile_steps(&group.curves)?));
    }
    let values: Vec<f64> = drawn
        .iter()
        .flat_map(|(_, steps)| steps.iter().flat_map(|(_, q)| q.iter().copied()))
        .collect();
    if values.is_empty() {
        return empty_plot(title, "no evaluation has a score yet");
    }
    let longest = drawn
        .iter()
        .flat_map(|(_, steps)| steps.last().map(|(x, _)| *x))
        .fold(2.0, f64::max);
    let (low, high) = padded_range(values);
    let mut svg = String::new();
    {
        let root = canvas(&mut svg);
        root.fill(&WHITE).map_err(drawing_failed)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, (FONT, 24).into_font().color(&INK))
            .margin(14)
            .x_label_area_size(52)
            .y_label_area_size(80)
            .build_cartesian_2d(1f64..longest, low..high)
            .map_err(drawing_failed)?;
        chart
            .configure_mesh()
            .x_desc("evaluations")
            .y_desc(objective_label(objective))
            .label_style((FONT, 16).into_font().color(&INK))
            .axis_desc_style((FONT, 17).into_font().color(&INK))
            .light_line_style(RGBColor(238, 240, 244))
            .bold_line_style(RGBColor(222, 226, 232))
            .x_labels((longest as usize).clamp(2, 11))
            .x_label_formatter(&whole_numbers_only)
            .draw()
            .map_err(drawing_failed)?;
        for (position, (group, steps)) in drawn.iter().enumerate() {
            let colour = group_colour(position);
            let runs = group.curves.len();
            if runs > 1 {
                let mut band = staircase(&column(steps, 2), None);
                let mut lower = staircase(&column(steps, 0), None);
                lower.reverse();
                band.extend(lower);
                chart
                    .draw_series(std::iter::once(Polygon::new(
                        band,
                        colour.mix(0.14).filled(),
                    )))
                    .map_err(drawing_failed)?;
            }
            let label = if runs > 1 {
                format!("{}: median of {runs} runs, band = quartiles", group.name)
            } else {
                group.name.clone()
            };
            chart
                .draw_series(LineSeries::new(
                    staircase(&column(steps, 1), None),
                    colour.stroke_width(2),
                ))
                .map_err(drawing_failed)?
                .label(label)
                .legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 18, y)], colour.stroke_width(2))
                });
        }
        draw_legend(&mut chart)?;
        root.present().map_err(drawing_failed)?;
    }
    Ok(svg)
}

/// The best validation objective so far against elapsed search seconds, one
/// step line per run in its group's colour (see the module docs). Same
/// input, same bytes.
pub fn plot_best_by_seconds(curves: &[TimedCurve], objective: &str) -> Result<String> {
    let title = "Best score so far, by search time";
    let drawable: Vec<&TimedCurve> = curves.iter().filter(|c| !c.points.is_empty()).collect();
    if drawable.is_empty() {
        return empty_plot(
            title,
            "no timed evaluation has a score (timings.jsonl is missing or empty)",
        );
    }
    let order = group_order(drawable.iter().map(|c| c.group.as_str()));
    let (low, high) = padded_range(drawable.iter().flat_map(|c| c.points.iter().map(|p| p.1)));
    let end = drawable
        .iter()
        .flat_map(|c| c.points.iter().map(|p| p.0).chain(std::iter::once(c.end)))
        .filter(|t| t.is_finite())
        .fold(0.0, f64::max);
    let right = if end > 0.0 { end * 1.02 } else { 1.0 };
    let mut svg = String::new();
    {
        let root = canvas(&mut svg);
        root.fill(&WHITE).map_err(drawing_failed)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, (FONT, 24).into_font().color(&INK))
            .margin(14)
            .x_label_area_size(52)
            .y_label_area_size(80)
            .build_cartesian_2d(0f64..right, low..high)
            .map_err(drawing_failed)?;
        chart
            .configure_mesh()
            .x_desc("elapsed search seconds (pauses between sessions left out)")
            .y_desc(objective_label(objective))
            .label_style((FONT, 16).into_font().color(&INK))
            .axis_desc_style((FONT, 17).into_font().color(&INK))
            .light_line_style(RGBColor(238, 240, 244))
            .bold_line_style(RGBColor(222, 226, 232))
            .draw()
            .map_err(drawing_failed)?;
        let mut labelled = vec![false; order.len()];
        for curve in drawable {
            let position = group_position(&order, &curve.group);
            let colour = group_colour(position);
            let series = chart
                .draw_series(LineSeries::new(
                    staircase(&curve.points, Some(curve.end)),
                    colour.mix(0.85).stroke_width(2),
                ))
                .map_err(drawing_failed)?;
            if !labelled[position] {
                labelled[position] = true;
                let runs = curves.iter().filter(|c| c.group == curve.group).count();
                let label = if runs > 1 {
                    format!("{} ({runs} runs, one line each)", curve.group)
                } else {
                    curve.group.clone()
                };
                series.label(label).legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 18, y)], colour.stroke_width(2))
                });
            }
        }
        draw_legend(&mut chart)?;
        root.present().map_err(drawing_failed)?;
    }
    Ok(svg)
}

/// Tick text for counts: whole numbers only (other ticks stay blank).
fn whole_numbers_only(x: &f64) -> String {
    if (x - x.round()).abs() < 1e-9 {
        format!("{x:.0}")
    } else {
        String::new()
    }
}

/// Draws the series labels in the lower right corner, where best-so-far
/// curves (which only rise) leave room.
pub(crate) fn draw_legend<'a, DB: DrawingBackend + 'a, CT: plotters::coord::CoordTranslate>(
    chart: &mut ChartContext<'a, DB, CT>,
) -> Result<()>
where
    DB::ErrorType: 'static,
{
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::LowerRight)
        .background_style(WHITE.mix(0.9))
        .border_style(RGBColor(200, 204, 212))
        .label_font((FONT, 16).into_font().color(&INK))
        .draw()
        .map_err(drawing_failed)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quartiles_skip_runs_without_a_score_yet() {
        let curves = vec![
            vec![None, Some(0.5), Some(0.5)],
            vec![Some(0.2), Some(0.2), Some(0.9)],
        ];
        let steps = quartile_steps(&curves).unwrap_or_default();
        assert_eq!(steps.len(), 3);
        assert_eq!(steps[0].1, [0.2, 0.2, 0.2]);
        assert_eq!(steps[1].1[1], 0.35);
    }
}

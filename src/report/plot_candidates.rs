//! Candidate plots: every scored candidate's validation objective against its
//! parameter count (log scale) with the Pareto front as a staircase, and the
//! objective along the lineage of the best candidate.

use super::plot_frame::{
    drawing_failed, group_colour, group_order, group_position, objective_label, padded_range,
    staircase, FONT, INK, PLOT_HEIGHT, PLOT_WIDTH,
};
use super::plot_progress::{draw_legend, empty_plot};
use crate::Result;
use plotters::prelude::*;

/// One scored candidate in the score–size scatter.
#[derive(Debug, Clone, PartialEq)]
pub struct CandidatePoint {
    /// Its group (strategy): it picks the colour.
    pub group: String,
    /// Trainable parameters (at least 1 to appear on the log axis).
    pub params: u64,
    /// Validation objective.
    pub objective: f64,
}

/// One candidate on the lineage of the best one, first ancestor first.
#[derive(Debug, Clone, PartialEq)]
pub struct LineagePoint {
    /// Journal index of the candidate.
    pub index: u64,
    /// Its validation objective (`None`: not scored, left out of the line).
    pub objective: Option<f64>,
    /// The mutation that made it from its parent (`None` for the first ancestor).
    pub mutation: Option<String>,
}

/// Tick text on the log axis: only 1, 2 and 5 times a power of ten are
/// written, so the labels never crowd.
fn one_two_five(x: &f64) -> String {
    if x.is_nan() || *x <= 0.0 {
        return String::new();
    }
    let power = 10f64.powf(x.log10().floor());
    let mantissa = (x / power * 1000.0).round() / 1000.0;
    if [1.0, 2.0, 5.0].contains(&mantissa) {
        format!("{x:.0}")
    } else {
        String::new()
    }
}

/// Chains up to this length get each point labelled with its mutation.
const LABELLED_LINEAGE: usize = 10;

/// Validation objective against parameter count (log x) for every candidate,
/// coloured by group, with `front` (the Pareto-optimal `(params, objective)`
/// pairs) drawn as a staircase: each step is the best score reachable with
/// at most that many parameters. Same input, same bytes.
pub fn plot_score_by_size(
    points: &[CandidatePoint],
    front: &[(u64, f64)],
    objective: &str,
) -> Result<String> {
    let title = "Every candidate: score against size";
    let shown: Vec<&CandidatePoint> = points
        .iter()
        .filter(|p| p.params > 0 && p.objective.is_finite())
        .collect();
    if shown.is_empty() {
        return empty_plot(title, "no candidate has both a score and a parameter count");
    }
    let order = group_order(shown.iter().map(|p| p.group.as_str()));
    let smallest = shown.iter().map(|p| p.params).min().unwrap_or(1) as f64;
    let largest = shown.iter().map(|p| p.params).max().unwrap_or(1) as f64;
    let (left, right) = (smallest / 1.5, largest * 1.5);
    let (low, high) = padded_range(shown.iter().map(|p| p.objective));
    let mut front_points: Vec<(f64, f64)> = front
        .iter()
        .filter(|(params, value)| *params > 0 && value.is_finite())
        .map(|&(params, value)| (params as f64, value))
        .collect();
    front_points.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.total_cmp(&b.1)));
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (PLOT_WIDTH, PLOT_HEIGHT)).into_drawing_area();
        root.fill(&WHITE).map_err(drawing_failed)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, (FONT, 24).into_font().color(&INK))
            .margin(14)
            .x_label_area_size(52)
            .y_label_area_size(80)
            .build_cartesian_2d((left..right).log_scale(), low..high)
            .map_err(drawing_failed)?;
        chart
            .configure_mesh()
            .x_desc("trainable parameters (log scale)")
            .y_desc(objective_label(objective))
            .label_style((FONT, 16).into_font().color(&INK))
            .axis_desc_style((FONT, 17).into_font().color(&INK))
            .light_line_style(RGBColor(238, 240, 244))
            .bold_line_style(RGBColor(222, 226, 232))
            .x_labels(12)
            .x_label_formatter(&one_two_five)
            .draw()
            .map_err(drawing_failed)?;
        for (position, name) in order.iter().enumerate() {
            let colour = group_colour(position);
            let mine = shown
                .iter()
                .filter(|p| group_position(&order, &p.group) == position)
                .map(|p| Circle::new((p.params as f64, p.objective), 3, colour.mix(0.55).filled()));
            chart
                .draw_series(mine)
                .map_err(drawing_failed)?
                .label(name.clone())
                .legend(move |(x, y)| Circle::new((x + 9, y), 4, colour.filled()));
        }
        if !front_points.is_empty() {
            chart
                .draw_series(LineSeries::new(
                    staircase(&front_points, Some(right)),
                    INK.stroke_width(2),
                ))
                .map_err(drawing_failed)?
                .label("Pareto front")
                .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], INK.stroke_width(2)));
            chart
                .draw_series(
                    front_points
                        .iter()
                        .map(|&point| Circle::new(point, 5, INK.stroke_width(2))),
                )
                .map_err(drawing_failed)?;
        }
        draw_legend(&mut chart)?;
        root.present().map_err(drawing_failed)?;
    }
    Ok(svg)
}

/// The validation objective along a lineage, first ancestor on the left,
/// ticks naming journal indices; short chains label each step with its
/// mutation. Same input, same bytes.
pub fn plot_lineage(chain: &[LineagePoint], objective: &str) -> Result<String> {
    let title = "Lineage of the best candidate";
    let scored: Vec<(f64, f64, String)> = chain
        .iter()
        .enumerate()
        .filter_map(|(step, link)| {
            let label = link
                .mutation
                .clone()
                .unwrap_or_else(|| "sampled".to_string());
            link.objective.map(|value| (step as f64, value, label))
        })
        .collect();
    if scored.is_empty() {
        return empty_plot(title, "no candidate of the lineage has a score");
    }
    let indices: Vec<u64> = chain.iter().map(|link| link.index).collect();
    let last = chain.len().saturating_sub(1) as f64;
    // Extra room above and below keeps the mutation labels inside the plot.
    let (low, high) = padded_range(scored.iter().map(|p| p.1));
    let room = (high - low) * 0.1;
    let (low, high) = (low - room, high + room);
    let tick = |x: &f64| {
        let nearest = x.round();
        if (x - nearest).abs() < 1e-6 && nearest >= 0.0 {
            indices
                .get(nearest as usize)
                .map_or(String::new(), |index| format!("#{index}"))
        } else {
            String::new()
        }
    };
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (PLOT_WIDTH, PLOT_HEIGHT)).into_drawing_area();
        root.fill(&WHITE).map_err(drawing_failed)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, (FONT, 24).into_font().color(&INK))
            .margin(14)
            .x_label_area_size(52)
            .y_label_area_size(80)
            .build_cartesian_2d(-0.5f64..last + 0.5, low..high)
            .map_err(drawing_failed)?;
        chart
            .configure_mesh()
            .x_desc("candidates along the lineage (journal index), first ancestor left")
            .y_desc(objective_label(objective))
            .x_labels(chain.len().clamp(2, 12))
            .x_label_formatter(&tick)
            .label_style((FONT, 16).into_font().color(&INK))
            .axis_desc_style((FONT, 17).into_font().color(&INK))
            .light_line_style(RGBColor(238, 240, 244))
            .bold_line_style(RGBColor(222, 226, 232))
            .draw()
            .map_err(drawing_failed)?;
        let colour = group_colour(0);
        chart
            .draw_series(LineSeries::new(
                scored.iter().map(|p| (p.0, p.1)),
                colour.stroke_width(2),
            ))
            .map_err(drawing_failed)?;
        let labelled = chain.len() <= LABELLED_LINEAGE;
        chart
            .draw_series(scored.iter().map(|(x, y, label)| {
                let text = if labelled {
                    label.clone()
                } else {
                    String::new()
                };
                EmptyElement::at((*x, *y))
                    + Circle::new((0, 0), 4, colour.filled())
                    + Text::new(text, (7, -20), (FONT, 15).into_font().color(&INK))
            }))
            .map_err(drawing_failed)?;
        root.present().map_err(drawing_failed)?;
    }
    Ok(svg)
}

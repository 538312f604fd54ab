//! Figures drawn with plotters, to SVG or PNG by the file's extension, without a window: a
//! galaxy's rotation curve with its components and a residual panel, a corner plot of the
//! posterior, and the population plot of σ/m against ⟨v_rel⟩ on log axes.

use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;

use caldera_infer::summary::Interval;
use caldera_physics::units::BARN_PER_GEV_PER_CM2_PER_G;

use crate::ReportError;
use crate::theme;

/// A figure that can draw itself on any plotters backend.
pub trait Figure {
    /// Size in pixels.
    fn size(&self) -> (u32, u32) {
        theme::SIZE
    }
    /// Draws on `root` (already sized to [`Figure::size`]).
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), ReportError>;
}

fn draw_error<E: std::error::Error + Send + Sync>(e: DrawingAreaErrorKind<E>) -> ReportError {
    ReportError::Draw(e.to_string())
}

/// Draws the legend of the labelled series in one style for every figure.
fn draw_legend<'a, DB: DrawingBackend + 'a, CT: CoordTranslate>(
    chart: &mut ChartContext<'a, DB, CT>,
    position: SeriesLabelPosition,
) -> Result<(), ReportError> {
    chart
        .configure_series_labels()
        .position(position)
        .label_font(font(theme::TICK_SIZE))
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK)
        .draw()
        .map_err(draw_error)
}

/// Writes `figure` to `path` (`.svg` or `.png`), atomically.
pub fn save_figure(figure: &impl Figure, path: &Path) -> Result<(), ReportError> {
    crate::register_font();
    let extension = path
        .extension()
        .and_then(|e| e.to_str())
        .map(str::to_ascii_lowercase)
        .unwrap_or_default();
    match extension.as_str() {
        "svg" => {
            let mut text = String::new();
            {
                let root = SVGBackend::with_string(&mut text, figure.size()).into_drawing_area();
                figure.draw(&root)?;
                root.present().map_err(draw_error)?;
            }
            caldera_data::write_atomic(path, text.as_bytes())?;
        }
        "png" => {
            let stem = path
                .file_stem()
                .map_or_else(|| "figure".into(), |s| s.to_string_lossy().into_owned());
            let temporary =
                path.with_file_name(format!(".{stem}.{}.partial.png", std::process::id()));
            {
                let root = BitMapBackend::new(&temporary, figure.size()).into_drawing_area();
                figure.draw(&root)?;
                root.present().map_err(draw_error)?;
            }
            std::fs::rename(&temporary, path).map_err(|source| ReportError::Io {
                path: path.to_path_buf(),
                reason: source,
            })?;
        }
        other => {
            return Err(ReportError::Draw(format!(
                "{}: figures are written as .svg or .png, not '.{other}'",
                path.display()
            )));
        }
    }
    Ok(())
}

fn font(size: u32) -> TextStyle<'static> {
    (theme::FONT, size).into_font().into()
}

/// A named line: label, colour, points, stroke width.
type Curve<'a> = (&'a str, RGBColor, Vec<(f64, f64)>, u32);

/// A galaxy's rotation curve: data with error bars, baryonic components, halo and total, r1 and
/// the core radius marked, and residuals (V_obs − V_model)/σ beneath on the same radius axis.
#[derive(Debug, Clone, PartialEq)]
pub struct RotationCurveFigure {
    pub title: String,
    pub components: caldera_infer::model::Components,
}

impl Figure for RotationCurveFigure {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), ReportError> {
        let c = &self.components;
        root.fill(&WHITE).map_err(draw_error)?;
        let (upper, lower) = root.split_vertically((f64::from(theme::SIZE.1) * 0.70) as u32);
        let r_max = c.fine_radius_kpc.last().copied().unwrap_or(1.0);
        let v_top = c
            .v_obs_kms
            .iter()
            .zip(&c.v_err_kms)
            .map(|(v, e)| v + e)
            .chain(c.v_total_fine_kms.iter().copied())
            .fold(1.0, f64::max)
            * 1.12;
        let v_bottom = [&c.v_gas_kms, &c.v_disk_kms]
            .into_iter()
            .chain(c.v_bulge_kms.as_ref())
            .flat_map(|v| v.iter().copied())
            .fold(0.0, f64::min)
            .min(0.0)
            * 1.1;
        let mut chart = ChartBuilder::on(&upper)
            .caption(&self.title, font(theme::TITLE_SIZE))
            .margin(14)
            .x_label_area_size(24)
            .y_label_area_size(80)
            .build_cartesian_2d(0.0..r_max, v_bottom..v_top)
            .map_err(draw_error)?;
        chart
            .configure_mesh()
            .disable_x_mesh()
            .disable_y_mesh()
            .y_desc("Circular velocity [km/s]")
            .x_label_formatter(&|_| String::new())
            .label_style(font(theme::TICK_SIZE))
            .axis_desc_style(font(theme::LABEL_SIZE))
            .draw()
            .map_err(draw_error)?;
        let line = |values: &[f64], radii: &[f64]| -> Vec<(f64, f64)> {
            radii.iter().copied().zip(values.iter().copied()).collect()
        };
        let mut series: Vec<Curve> = vec![
            ("gas", theme::GAS, line(&c.v_gas_kms, &c.radius_kpc), 2),
            (
                "stellar disk",
                theme::DISK,
                line(&c.v_disk_kms, &c.radius_kpc),
                2,
            ),
        ];
        if let Some(bulge) = &c.v_bulge_kms {
            series.push(("bulge", theme::BULGE, line(bulge, &c.radius_kpc), 2));
        }
        series.push((
            "dark halo",
            theme::HALO,
            line(&c.v_halo_fine_kms, &c.fine_radius_kpc),
            3,
        ));
        series.push((
            "total",
            theme::TOTAL,
            line(&c.v_total_fine_kms, &c.fine_radius_kpc),
            4,
        ));
        for (name, colour, points, width) in series {
            chart
                .draw_series(LineSeries::new(points, colour.stroke_width(width)))
                .map_err(draw_error)?
                .label(name)
                .legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 24, y)], colour.stroke_width(width))
                });
        }
        chart
            .draw_series(c.radius_kpc.iter().zip(&c.v_obs_kms).zip(&c.v_err_kms).map(
                |((&r, &v), &e)| {
                    ErrorBar::new_vertical(r, v - e, v, v + e, theme::DATA.stroke_width(2), 8)
                },
            ))
            .map_err(draw_error)?;
        chart
            .draw_series(
                c.radius_kpc
                    .iter()
                    .zip(&c.v_obs_kms)
                    .map(|(&r, &v)| Circle::new((r, v), 5, theme::DATA.filled())),
            )
            .map_err(draw_error)?
            .label("observed")
            .legend(|(x, y)| Circle::new((x + 12, y), 5, theme::DATA.filled()));
        for (name, radius) in [("r1", c.r1_kpc), ("r_core", c.core_radius_kpc)] {
            let Some(r) = radius.filter(|r| *r < r_max) else {
                continue;
            };
            chart
                .draw_series(std::iter::once(PathElement::new(
                    vec![(r, v_bottom), (r, v_top * 0.93)],
                    theme::MARKER.stroke_width(2),
                )))
                .map_err(draw_error)?;
            chart
                .draw_series(std::iter::once(Text::new(
                    name.to_string(),
                    (r, v_top * 0.97),
                    font(theme::TICK_SIZE),
                )))
                .map_err(draw_error)?;
        }
        draw_legend(&mut chart, SeriesLabelPosition::LowerRight)?;

        let residuals: Vec<(f64, f64)> = c
            .radius_kpc
            .iter()
            .zip(c.v_obs_kms.iter().zip(&c.v_model_kms).zip(&c.v_err_kms))
            .map(|(&r, ((&o, &m), &e))| (r, (o - m) / e))
            .collect();
        let span = residuals.iter().map(|p| p.1.abs()).fold(3.0, f64::max) * 1.15;
        let mut lower_chart = ChartBuilder::on(&lower)
            .margin(14)
            .x_label_area_size(60)
            .y_label_area_size(80)
            .build_cartesian_2d(0.0..r_max, -span..span)
            .map_err(draw_error)?;
        lower_chart
            .configure_mesh()
            .disable_x_mesh()
            .disable_y_mesh()
            .x_desc("Radius [kpc]")
            .y_desc("(V_obs − V_model)/σ")
            .y_labels(5)
            .label_style(font(theme::TICK_SIZE))
            .axis_desc_style(font(theme::LABEL_SIZE))
            .draw()
            .map_err(draw_error)?;
        lower_chart
            .draw_series(LineSeries::new(
                vec![(0.0, 0.0), (r_max, 0.0)],
                theme::MARKER.stroke_width(1),
            ))
            .map_err(draw_error)?;
        lower_chart
            .draw_series(
                residuals
                    .iter()
                    .map(|&p| Circle::new(p, 5, theme::DATA.filled())),
            )
            .map_err(draw_error)?;
        Ok(())
    }
}

/// A corner plot: histograms on the diagonal, pairwise scatter below it.
#[derive(Debug, Clone, PartialEq)]
pub struct CornerFigure {
    pub title: String,
    /// Axis labels with units (a layout's labels, e.g. "log σ/m [cm²/g]").
    pub names: Vec<String>,
    /// One column of samples per parameter.
    pub columns: Vec<Vec<f64>>,
}

/// Samples drawn in each scatter panel, at most.
const CORNER_POINTS: usize = 2500;

impl Figure for CornerFigure {
    fn size(&self) -> (u32, u32) {
        let side = (180 * self.columns.len() as u32).clamp(600, 1400);
        (side, side)
    }

    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), ReportError> {
        root.fill(&WHITE).map_err(draw_error)?;
        let root = root
            .titled(&self.title, font(theme::TITLE_SIZE))
            .map_err(draw_error)?;
        let n = self.columns.len();
        if n == 0 {
            return Ok(());
        }
        let ranges: Vec<(f64, f64)> = self
            .columns
            .iter()
            .map(|c| {
                let (lo, hi) = c
                    .iter()
                    .filter(|v| v.is_finite())
                    .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
                        (a.min(v), b.max(v))
                    });
                if lo < hi {
                    (lo, hi)
                } else {
                    (lo - 0.5, lo + 0.5)
                }
            })
            .collect();
        let panels = root.split_evenly((n, n));
        let tick = theme::TICK_SIZE * 3 / 4;
        let stride = (self.columns[0].len() / CORNER_POINTS).max(1);
        for row in 0..n {
            for col in 0..n {
                let area = &panels[row * n + col];
                if col > row {
                    continue;
                }
                let x_area = if row == n - 1 { 56 } else { 4 };
                let y_area = if col == 0 { 92 } else { 4 };
                let (x0, x1) = ranges[col];
                if row == col {
                    let bins = 30;
                    let mut counts = vec![0usize; bins];
                    for &v in self.columns[col].iter().filter(|v| v.is_finite()) {
                        let k = (((v - x0) / (x1 - x0)) * bins as f64).floor() as usize;
                        counts[k.min(bins - 1)] += 1;
                    }
                    let top = counts.iter().copied().max().unwrap_or(1) as f64 * 1.1;
                    let mut chart = ChartBuilder::on(area)
                        .x_label_area_size(x_area)
                        .y_label_area_size(y_area)
                        .build_cartesian_2d(x0..x1, 0.0..top)
                        .map_err(draw_error)?;
                    let mut mesh = chart.configure_mesh();
                    mesh.disable_mesh()
                        .y_labels(0)
                        .label_style(font(tick))
                        .axis_desc_style(font(tick + 2));
                    if row == n - 1 {
                        mesh.x_desc(self.names[col].as_str()).x_labels(3);
                    } else {
                        mesh.x_labels(0);
                    }
                    mesh.draw().map_err(draw_error)?;
                    let width = (x1 - x0) / bins as f64;
                    chart
                        .draw_series(counts.iter().enumerate().map(|(k, &c)| {
                            let left = x0 + width * k as f64;
                            Rectangle::new(
                                [(left, 0.0), (left + width, c as f64)],
                                theme::POSTERIOR.mix(0.6).filled(),
                            )
                        }))
                        .map_err(draw_error)?;
                } else {
                    let (y0, y1) = ranges[row];
                    let mut chart = ChartBuilder::on(area)
                        .x_label_area_size(x_area)
                        .y_label_area_size(y_area)
                        .build_cartesian_2d(x0..x1, y0..y1)
                        .map_err(draw_error)?;
                    let mut mesh = chart.configure_mesh();
                    mesh.disable_mesh()
                        .label_style(font(tick))
                        .axis_desc_style(font(tick + 2));
                    if row == n - 1 {
                        mesh.x_desc(self.names[col].as_str()).x_labels(3);
                    } else {
                        mesh.x_labels(0);
                    }
                    if col == 0 {
                        mesh.y_desc(self.names[row].as_str()).y_labels(3);
                    } else {
                        mesh.y_labels(0);
                    }
                    mesh.draw().map_err(draw_error)?;
                    chart
                        .draw_series(
                            self.columns[col]
                                .iter()
                                .zip(&self.columns[row])
                                .step_by(stride)
                                .filter(|(x, y)| x.is_finite() && y.is_finite())
                                .map(|(&x, &y)| {
                                    Circle::new((x, y), 1, theme::POSTERIOR.mix(0.35).filled())
                                }),
                        )
                        .map_err(draw_error)?;
                }
            }
        }
        Ok(())
    }
}

/// A tick label on a log axis: powers of ten and their 2× and 5× multiples, blank elsewhere.
fn log_tick(value: f64) -> String {
    let exponent = value.log10().floor();
    let mantissa = value / 10f64.powf(exponent);
    let nice = [1.0, 2.0, 5.0]
        .iter()
        .any(|m| (mantissa - m).abs() < 1e-6 * m);
    if !nice {
        return String::new();
    }
    if (1e-3..1e5).contains(&value) {
        let decimals = (-exponent).max(0.0) as usize;
        format!("{value:.decimals$}")
    } else {
        format!("{value:.0e}")
    }
}

/// One galaxy in the population plot.
#[derive(Debug, Clone, PartialEq)]
pub struct PopulationPoint {
    pub name: String,
    /// ⟨v_rel⟩: median, 16th and 84th percentiles, km/s.
    pub v_rel_kms: (f64, f64, f64),
    /// σ/m: median, 16th and 84th percentiles, cm²/g.
    pub sigma_m_cm2_g: (f64, f64, f64),
    /// 95% upper limit on σ/m, when the galaxy gives only a limit.
    pub upper95_cm2_g: Option<f64>,
}

impl PopulationPoint {
    /// A galaxy's point from its posterior summaries of ⟨v_rel⟩ (km/s) and σ/m (cm²/g).
    #[must_use]
    pub fn new(name: &str, v_rel_kms: &Interval, sigma_m_cm2_g: &Interval) -> Self {
        Self {
            name: name.to_string(),
            v_rel_kms: (v_rel_kms.median, v_rel_kms.p16, v_rel_kms.p84),
            sigma_m_cm2_g: (sigma_m_cm2_g.median, sigma_m_cm2_g.p16, sigma_m_cm2_g.p84),
            upper95_cm2_g: sigma_m_cm2_g.upper95,
        }
    }
}

/// σ/m against ⟨v_rel⟩ on log axes, with error bars, upper-limit arrows and model curves.
#[derive(Debug, Clone, PartialEq)]
pub struct PopulationFigure {
    pub title: String,
    pub points: Vec<PopulationPoint>,
    /// Curves over the points (population fits, particle models).
    pub curves: Vec<PopulationCurve>,
}

/// A curve in the population plot: σ/m in cm²/g against a speed in km/s.
#[derive(Debug, Clone, PartialEq)]
pub struct PopulationCurve {
    pub label: String,
    /// (speed km/s, σ/m cm²/g).
    pub points: Vec<(f64, f64)>,
    /// Dashed: the unaveraged σ(v)/m at relative speed v. Solid: the velocity-averaged
    /// ⟨σv⟩/m / ⟨v_rel⟩ at mean relative speed ⟨v_rel⟩ — what the galaxies measure.
    pub dashed: bool,
    /// Curves of one group share a colour (a particle model's two curves).
    pub group: usize,
}

impl Figure for PopulationFigure {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), ReportError> {
        root.fill(&WHITE).map_err(draw_error)?;
        let xs = self
            .points
            .iter()
            .flat_map(|p| [p.v_rel_kms.1, p.v_rel_kms.2]);
        let ys = self.points.iter().flat_map(|p| {
            [
                p.sigma_m_cm2_g.1,
                p.sigma_m_cm2_g.2,
                p.upper95_cm2_g.unwrap_or(p.sigma_m_cm2_g.2),
            ]
        });
        let positive = |it: &mut dyn Iterator<Item = f64>| {
            it.filter(|v| v.is_finite() && *v > 0.0)
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
                    (a.min(v), b.max(v))
                })
        };
        let (mut x0, mut x1) = positive(
            &mut xs.chain(
                self.curves
                    .iter()
                    .flat_map(|c| c.points.iter().map(|p| p.0)),
            ),
        );
        let (mut y0, mut y1) = positive(&mut ys.into_iter());
        if x0.is_nan() || x1.is_nan() || x0 >= x1 {
            (x0, x1) = (10.0, 1000.0);
        }
        if y0.is_nan() || y1.is_nan() || y0 >= y1 {
            (y0, y1) = (0.01, 100.0);
        }
        // Curves widen the range by up to a factor 30 beyond the points.
        for &(_, y) in self.curves.iter().flat_map(|c| c.points.iter()) {
            if y.is_finite() && y > 0.0 {
                y0 = y0.min(y.max(y0 / 30.0));
                y1 = y1.max(y.min(y1 * 30.0));
            }
        }
        let (x0, x1, y0, y1) = (x0 / 1.5, x1 * 1.5, y0 / 3.0, y1 * 3.0);
        let mut chart = ChartBuilder::on(root)
            .caption(&self.title, font(theme::TITLE_SIZE))
            .margin(16)
            .x_label_area_size(64)
            .y_label_area_size(90)
            .build_cartesian_2d((x0..x1).log_scale(), (y0..y1).log_scale())
            .map_err(draw_error)?;
        chart
            .configure_mesh()
            .disable_mesh()
            .x_desc("Mean relative velocity <v_rel> [km/s]")
            .y_desc(format!(
                "σ/m [cm²/g]  (1 cm²/g = {BARN_PER_GEV_PER_CM2_PER_G:.2} barn/GeV)"
            ))
            .x_label_formatter(&|v| log_tick(*v))
            .y_label_formatter(&|v| log_tick(*v))
            .label_style(font(theme::TICK_SIZE))
            .axis_desc_style(font(theme::LABEL_SIZE))
            .draw()
            .map_err(draw_error)?;
        for curve in &self.curves {
            let colour = theme::CURVES[curve.group % theme::CURVES.len()];
            let style = colour.stroke_width(3);
            // Runs of points inside the plotted range; a curve leaving it is cut, not clamped.
            let mut runs: Vec<Vec<(f64, f64)>> = vec![Vec::new()];
            for &(x, y) in &curve.points {
                if x > 0.0 && y >= y0 && y <= y1 {
                    if let Some(run) = runs.last_mut() {
                        run.push((x, y));
                    }
                } else if runs.last().is_some_and(|run| !run.is_empty()) {
                    runs.push(Vec::new());
                }
            }
            let mut labelled = false;
            for run in runs.into_iter().filter(|r| r.len() > 1) {
                let drawn = if curve.dashed {
                    chart
                        .draw_series(DashedLineSeries::new(run, 10, 6, style))
                        .map_err(draw_error)?
                } else {
                    chart
                        .draw_series(LineSeries::new(run, style))
                        .map_err(draw_error)?
                };
                if !labelled {
                    labelled = true;
                    let end = if curve.dashed { 12 } else { 24 };
                    drawn
                        .label(curve.label.as_str())
                        .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + end, y)], style));
                }
            }
        }
        for p in &self.points {
            let (v, v_lo, v_hi) = p.v_rel_kms;
            if let Some(limit) = p.upper95_cm2_g {
                let tip = limit / 2.5;
                chart
                    .draw_series([
                        PathElement::new(vec![(v, limit), (v, tip)], theme::LIMIT.stroke_width(2)),
                        PathElement::new(
                            vec![(v_lo, limit), (v_hi, limit)],
                            theme::LIMIT.stroke_width(2),
                        ),
                    ])
                    .map_err(draw_error)?;
                chart
                    .draw_series(std::iter::once(TriangleMarker::new(
                        (v, tip),
                        7,
                        theme::LIMIT.filled(),
                    )))
                    .map_err(draw_error)?;
            } else {
                let (s, s_lo, s_hi) = p.sigma_m_cm2_g;
                let style = theme::DATA.stroke_width(2);
                chart
                    .draw_series(std::iter::once(ErrorBar::new_vertical(
                        v, s_lo, s, s_hi, style, 8,
                    )))
                    .map_err(draw_error)?;
                chart
                    .draw_series(std::iter::once(ErrorBar::new_horizontal(
                        s, v_lo, v, v_hi, style, 8,
                    )))
                    .map_err(draw_error)?;
                chart
                    .draw_series(std::iter::once(Circle::new(
                        (v, s),
                        6,
                        theme::DATA.filled(),
                    )))
                    .map_err(draw_error)?;
            }
        }
        if !self.curves.is_empty() {
            draw_legend(&mut chart, SeriesLabelPosition::LowerLeft)?;
        }
        Ok(())
    }
}

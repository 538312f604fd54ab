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
    /// Draws on `root`, sized to [`Figure::size`] times `scale`; every length in pixels (margins,
    /// fonts, strokes, markers) is multiplied by `scale`.
    fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        scale: Scale,
    ) -> Result<(), ReportError>;
}

/// How many drawing units make one pixel. Plotters' backends take whole-number coordinates, so
/// a curve drawn at one unit per pixel is rounded to whole pixels and looks stair-stepped in a
/// vector file; SVG figures are therefore drawn [`SVG_SUBPIXELS`] times finer and shown at their
/// nominal size through the `viewBox`. Bitmaps use [`Scale::ONE`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Scale(u32);

/// Drawing units per pixel in SVG figures (1/8 px resolution; common practice).
pub const SVG_SUBPIXELS: u32 = 8;

impl Scale {
    /// One drawing unit per pixel.
    pub const ONE: Self = Self(1);

    /// `factor` drawing units per pixel (at least 1).
    #[must_use]
    pub fn new(factor: u32) -> Self {
        Self(factor.max(1))
    }

    /// `n` pixels in drawing units.
    #[must_use]
    pub const fn px(self, n: u32) -> u32 {
        n * self.0
    }

    /// `n` pixels (signed: an offset) in drawing units.
    #[must_use]
    pub const fn offset(self, n: i32) -> i32 {
        n * self.0 as i32
    }

    /// The bundled font at `size` pixels.
    fn font(self, size: u32) -> TextStyle<'static> {
        (theme::FONT, self.px(size)).into_font().into()
    }
}

fn draw_error<E: std::error::Error + Send + Sync>(e: DrawingAreaErrorKind<E>) -> ReportError {
    ReportError::Draw(e.to_string())
}

/// Where a figure's legend sits inside its plotting area.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum LegendCorner {
    LowerLeft,
    LowerRight,
}

/// Draws the legend of the labelled series (`labels`, in order) in one style for every figure, in
/// the plotting area's lower left or lower right corner.
fn draw_legend<'a, DB: DrawingBackend + 'a, CT: CoordTranslate>(
    chart: &mut ChartContext<'a, DB, CT>,
    corner: LegendCorner,
    labels: &[&str],
    scale: Scale,
) -> Result<(), ReportError> {
    // Placed here rather than by plotters' named corners, whose 5-unit gap from the axes would
    // shrink to a fraction of a pixel in a finely drawn SVG.
    let font = scale.font(theme::TICK_SIZE);
    let (margin, swatch, gap) = (scale.offset(10), scale.offset(30), scale.offset(5));
    let mut text = MultiLineText::<_, &str>::new((0, 0), &font);
    for label in labels {
        text.push_line(*label);
    }
    let (text_w, text_h) = text
        .estimate_dimension()
        .map_err(|e| ReportError::Draw(e.to_string()))?;
    let (area_w, area_h) = chart.plotting_area().dim_in_pixel();
    let x = if corner == LegendCorner::LowerLeft {
        gap
    } else {
        area_w as i32 - (text_w + swatch + 2 * margin) - gap
    };
    let y = area_h as i32 - (text_h + 2 * margin) - gap;
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::Coordinate(x, y))
        .margin(scale.px(10))
        .legend_area_size(scale.px(30))
        .label_font(font.clone())
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK.stroke_width(scale.px(1)))
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
            let text = svg_text(figure)?;
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
                figure.draw(&root, Scale::ONE)?;
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

/// The figure as an SVG document: drawn [`SVG_SUBPIXELS`] times finer than its size and shown at
/// its size through the `viewBox`.
pub fn svg_text(figure: &impl Figure) -> Result<String, ReportError> {
    crate::register_font();
    let scale = Scale::new(SVG_SUBPIXELS);
    let (width, height) = figure.size();
    let fine = (scale.px(width), scale.px(height));
    let mut text = String::new();
    {
        let root = SVGBackend::with_string(&mut text, fine).into_drawing_area();
        figure.draw(&root, scale)?;
        root.present().map_err(draw_error)?;
    }
    let drawn = format!(r#"width="{}" height="{}""#, fine.0, fine.1);
    let shown = format!(r#"width="{width}" height="{height}""#);
    // Plotters writes outlined rectangles (the legend's frame) without a stroke width, which
    // would leave them one drawing unit (1/8 px) wide.
    let frame = format!(r#"fill="none" stroke-width="{}" stroke="#, scale.px(1));
    let mut out = String::with_capacity(text.len() + 64);
    for line in text.replacen(&drawn, &shown, 1).lines() {
        if line.starts_with("<rect") && !line.contains("stroke-width") {
            out.push_str(&line.replace(r#"fill="none" stroke="#, &frame));
        } else {
            out.push_str(line);
        }
        out.push('\n');
    }
    Ok(out)
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
    fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        scale: Scale,
    ) -> Result<(), ReportError> {
        let c = &self.components;
        root.fill(&WHITE).map_err(draw_error)?;
        let (upper, lower) =
            root.split_vertically((f64::from(root.dim_in_pixel().1) * 0.70) as u32);
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
            .caption(&self.title, scale.font(theme::TITLE_SIZE))
            .margin(scale.px(14))
            .x_label_area_size(scale.px(24))
            .y_label_area_size(scale.px(80))
            .build_cartesian_2d(0.0..r_max, v_bottom..v_top)
            .map_err(draw_error)?;
        chart
            .configure_mesh()
            .disable_x_mesh()
            .disable_y_mesh()
            .axis_style(BLACK.stroke_width(scale.px(1)))
            .set_all_tick_mark_size(scale.px(5))
            .y_desc("Circular velocity [km/s]")
            .x_label_formatter(&|_| String::new())
            .label_style(scale.font(theme::TICK_SIZE))
            .axis_desc_style(scale.font(theme::LABEL_SIZE))
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
        let series_names: Vec<&str> = series.iter().map(|s| s.0).collect();
        for (name, colour, points, width) in series {
            chart
                .draw_series(LineSeries::new(
                    points,
                    colour.stroke_width(scale.px(width)),
                ))
                .map_err(draw_error)?
                .label(name)
                .legend(move |(x, y)| {
                    PathElement::new(
                        vec![(x, y), (x + scale.offset(24), y)],
                        colour.stroke_width(scale.px(width)),
                    )
                });
        }
        chart
            .draw_series(c.radius_kpc.iter().zip(&c.v_obs_kms).zip(&c.v_err_kms).map(
                |((&r, &v), &e)| {
                    ErrorBar::new_vertical(
                        r,
                        v - e,
                        v,
                        v + e,
                        theme::DATA.stroke_width(scale.px(2)),
                        scale.px(8),
                    )
                },
            ))
            .map_err(draw_error)?;
        chart
            .draw_series(
                c.radius_kpc
                    .iter()
                    .zip(&c.v_obs_kms)
                    .map(|(&r, &v)| Circle::new((r, v), scale.px(5), theme::DATA.filled())),
            )
            .map_err(draw_error)?
            .label("observed")
            .legend(move |(x, y)| {
                Circle::new((x + scale.offset(12), y), scale.px(5), theme::DATA.filled())
            });
        for (name, radius) in [("r1", c.r1_kpc), ("r_core", c.core_radius_kpc)] {
            let Some(r) = radius.filter(|r| *r < r_max) else {
                continue;
            };
            chart
                .draw_series(std::iter::once(PathElement::new(
                    vec![(r, v_bottom), (r, v_top * 0.93)],
                    theme::MARKER.stroke_width(scale.px(2)),
                )))
                .map_err(draw_error)?;
            chart
                .draw_series(std::iter::once(Text::new(
                    name.to_string(),
                    (r, v_top * 0.97),
                    scale.font(theme::TICK_SIZE),
                )))
                .map_err(draw_error)?;
        }
        let mut labels: Vec<&str> = series_names;
        labels.push("observed");
        draw_legend(&mut chart, LegendCorner::LowerRight, &labels, scale)?;

        let residuals: Vec<(f64, f64)> = c
            .radius_kpc
            .iter()
            .zip(c.v_obs_kms.iter().zip(&c.v_model_kms).zip(&c.v_err_kms))
            .map(|(&r, ((&o, &m), &e))| (r, (o - m) / e))
            .collect();
        let span = residuals.iter().map(|p| p.1.abs()).fold(3.0, f64::max) * 1.15;
        let mut lower_chart = ChartBuilder::on(&lower)
            .margin(scale.px(14))
            .x_label_area_size(scale.px(60))
            .y_label_area_size(scale.px(80))
            .build_cartesian_2d(0.0..r_max, -span..span)
            .map_err(draw_error)?;
        lower_chart
            .configure_mesh()
            .disable_x_mesh()
            .disable_y_mesh()
            .axis_style(BLACK.stroke_width(scale.px(1)))
            .set_all_tick_mark_size(scale.px(5))
            .x_desc("Radius [kpc]")
            .y_desc("(V_obs − V_model)/σ")
            .y_labels(5)
            .label_style(scale.font(theme::TICK_SIZE))
            .axis_desc_style(scale.font(theme::LABEL_SIZE))
            .draw()
            .map_err(draw_error)?;
        lower_chart
            .draw_series(LineSeries::new(
                vec![(0.0, 0.0), (r_max, 0.0)],
                theme::MARKER.stroke_width(scale.px(1)),
            ))
            .map_err(draw_error)?;
        lower_chart
            .draw_series(
                residuals
                    .iter()
                    .map(|&p| Circle::new(p, scale.px(5), theme::DATA.filled())),
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

    fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        scale: Scale,
    ) -> Result<(), ReportError> {
        root.fill(&WHITE).map_err(draw_error)?;
        let root = root
            .titled(&self.title, scale.font(theme::TITLE_SIZE))
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
        let axis = BLACK.stroke_width(scale.px(1));
        let stride = (self.columns[0].len() / CORNER_POINTS).max(1);
        for row in 0..n {
            for col in 0..n {
                let area = &panels[row * n + col];
                if col > row {
                    continue;
                }
                let x_area = scale.px(if row == n - 1 { 56 } else { 4 });
                let y_area = scale.px(if col == 0 { 92 } else { 4 });
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
                        .axis_style(axis)
                        .set_all_tick_mark_size(scale.px(5))
                        .label_style(scale.font(tick))
                        .axis_desc_style(scale.font(tick + 2));
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
                        .axis_style(axis)
                        .set_all_tick_mark_size(scale.px(5))
                        .label_style(scale.font(tick))
                        .axis_desc_style(scale.font(tick + 2));
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
                                    Circle::new(
                                        (x, y),
                                        scale.px(1),
                                        theme::POSTERIOR.mix(0.35).filled(),
                                    )
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
    fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        scale: Scale,
    ) -> Result<(), ReportError> {
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
            .caption(&self.title, scale.font(theme::TITLE_SIZE))
            .margin(scale.px(16))
            .x_label_area_size(scale.px(64))
            .y_label_area_size(scale.px(90))
            .build_cartesian_2d((x0..x1).log_scale(), (y0..y1).log_scale())
            .map_err(draw_error)?;
        chart
            .configure_mesh()
            .disable_mesh()
            .axis_style(BLACK.stroke_width(scale.px(1)))
            .set_all_tick_mark_size(scale.px(5))
            .x_desc("Mean relative velocity <v_rel> [km/s]")
            .y_desc(format!(
                "σ/m [cm²/g]  (1 cm²/g = {BARN_PER_GEV_PER_CM2_PER_G:.2} barn/GeV)"
            ))
            .x_label_formatter(&|v| log_tick(*v))
            .y_label_formatter(&|v| log_tick(*v))
            .label_style(scale.font(theme::TICK_SIZE))
            .axis_desc_style(scale.font(theme::LABEL_SIZE))
            .draw()
            .map_err(draw_error)?;
        let mut legend_labels: Vec<&str> = Vec::new();
        for curve in &self.curves {
            let colour = theme::CURVES[curve.group % theme::CURVES.len()];
            let style = colour.stroke_width(scale.px(3));
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
                        .draw_series(DashedLineSeries::new(run, scale.px(10), scale.px(6), style))
                        .map_err(draw_error)?
                } else {
                    chart
                        .draw_series(LineSeries::new(run, style))
                        .map_err(draw_error)?
                };
                if !labelled {
                    labelled = true;
                    legend_labels.push(curve.label.as_str());
                    let end = scale.offset(if curve.dashed { 12 } else { 24 });
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
                        PathElement::new(
                            vec![(v, limit), (v, tip)],
                            theme::LIMIT.stroke_width(scale.px(2)),
                        ),
                        PathElement::new(
                            vec![(v_lo, limit), (v_hi, limit)],
                            theme::LIMIT.stroke_width(scale.px(2)),
                        ),
                    ])
                    .map_err(draw_error)?;
                chart
                    .draw_series(std::iter::once(TriangleMarker::new(
                        (v, tip),
                        scale.px(7),
                        theme::LIMIT.filled(),
                    )))
                    .map_err(draw_error)?;
            } else {
                let (s, s_lo, s_hi) = p.sigma_m_cm2_g;
                let style = theme::DATA.stroke_width(scale.px(2));
                chart
                    .draw_series(std::iter::once(ErrorBar::new_vertical(
                        v,
                        s_lo,
                        s,
                        s_hi,
                        style,
                        scale.px(8),
                    )))
                    .map_err(draw_error)?;
                chart
                    .draw_series(std::iter::once(ErrorBar::new_horizontal(
                        s,
                        v_lo,
                        v,
                        v_hi,
                        style,
                        scale.px(8),
                    )))
                    .map_err(draw_error)?;
                chart
                    .draw_series(std::iter::once(Circle::new(
                        (v, s),
                        scale.px(6),
                        theme::DATA.filled(),
                    )))
                    .map_err(draw_error)?;
            }
        }
        if !legend_labels.is_empty() {
            draw_legend(&mut chart, LegendCorner::LowerLeft, &legend_labels, scale)?;
        }
        Ok(())
    }
}

/// Detection power against the number of galaxies in a catalogue (a forecast).
#[derive(Debug, Clone, PartialEq)]
pub struct PowerFigure {
    pub title: String,
    /// Curves of power (0–1) against the number of galaxies.
    pub curves: Vec<PowerCurve>,
    /// Reference points with an interval (number of galaxies, power, low, high), e.g. from
    /// catalogues fitted end to end.
    pub references: Vec<(f64, f64, f64, f64)>,
    pub reference_label: String,
}

/// One curve of a [`PowerFigure`].
#[derive(Debug, Clone, PartialEq)]
pub struct PowerCurve {
    pub label: String,
    /// (number of galaxies, power).
    pub points: Vec<(f64, f64)>,
    pub dashed: bool,
}

impl Figure for PowerFigure {
    fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        scale: Scale,
    ) -> Result<(), ReportError> {
        root.fill(&WHITE).map_err(draw_error)?;
        let x_max = self
            .curves
            .iter()
            .flat_map(|c| c.points.iter().map(|p| p.0))
            .chain(self.references.iter().map(|r| r.0))
            .filter(|x| x.is_finite())
            .fold(1.0, f64::max);
        let mut chart = ChartBuilder::on(root)
            .caption(&self.title, scale.font(theme::TITLE_SIZE))
            .margin(scale.px(16))
            .x_label_area_size(scale.px(64))
            .y_label_area_size(scale.px(90))
            .build_cartesian_2d(0.0..x_max * 1.08, 0.0..1.05)
            .map_err(draw_error)?;
        chart
            .configure_mesh()
            .disable_mesh()
            .axis_style(BLACK.stroke_width(scale.px(1)))
            .set_all_tick_mark_size(scale.px(5))
            .x_desc("Galaxies in the catalogue")
            .y_desc("Detection power (fraction of catalogues)")
            .x_label_formatter(&|x| format!("{x:.0}"))
            .y_label_formatter(&|y| format!("{y:.1}"))
            .label_style(scale.font(theme::TICK_SIZE))
            .axis_desc_style(scale.font(theme::LABEL_SIZE))
            .draw()
            .map_err(draw_error)?;
        let mut labels: Vec<&str> = Vec::new();
        for (k, curve) in self.curves.iter().enumerate() {
            let colour = theme::CURVES[k % theme::CURVES.len()];
            let style = colour.stroke_width(scale.px(3));
            let end = scale.offset(if curve.dashed { 12 } else { 24 });
            let drawn = if curve.dashed {
                chart
                    .draw_series(DashedLineSeries::new(
                        curve.points.clone(),
                        scale.px(10),
                        scale.px(6),
                        style,
                    ))
                    .map_err(draw_error)?
            } else {
                chart
                    .draw_series(LineSeries::new(curve.points.clone(), style))
                    .map_err(draw_error)?
            };
            drawn
                .label(curve.label.as_str())
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + end, y)], style));
            labels.push(curve.label.as_str());
            chart
                .draw_series(
                    curve
                        .points
                        .iter()
                        .map(|&p| Circle::new(p, scale.px(5), colour.filled())),
                )
                .map_err(draw_error)?;
        }
        if !self.references.is_empty() {
            let style = theme::DATA.stroke_width(scale.px(2));
            for &(x, y, low, high) in &self.references {
                chart
                    .draw_series(std::iter::once(ErrorBar::new_vertical(
                        x,
                        low.clamp(0.0, 1.0),
                        y,
                        high.clamp(0.0, 1.0),
                        style,
                        scale.px(8),
                    )))
                    .map_err(draw_error)?;
            }
            let (size, lead) = (scale.px(7), scale.offset(12));
            chart
                .draw_series(
                    self.references.iter().map(|&(x, y, _, _)| {
                        TriangleMarker::new((x, y), size, theme::DATA.filled())
                    }),
                )
                .map_err(draw_error)?
                .label(self.reference_label.as_str())
                .legend(move |(x, y)| {
                    TriangleMarker::new((x + lead, y), size, theme::DATA.filled())
                });
            labels.push(self.reference_label.as_str());
        }
        if !labels.is_empty() {
            draw_legend(&mut chart, LegendCorner::LowerRight, &labels, scale)?;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The coordinates of every `<polyline>` in an SVG document.
    fn polyline_points(svg: &str) -> Vec<(f64, f64)> {
        svg.split("<polyline")
            .skip(1)
            .filter_map(|element| element.split("points=\"").nth(1)?.split('"').next())
            .flat_map(|points| {
                points.split_whitespace().filter_map(|pair| {
                    let (x, y) = pair.split_once(',')?;
                    Some((x.parse().ok()?, y.parse().ok()?))
                })
            })
            .collect()
    }

    #[test]
    fn svg_curves_are_not_rounded_to_whole_pixels() {
        // A smooth, shallow curve: at one unit per pixel its y would move in whole-pixel stairs.
        let points: Vec<(f64, f64)> = (0..400)
            .map(|k| {
                let v = 10.0 * 1.01f64.powi(k);
                (v, 1.0 + 0.3 * (v / 50.0).ln().sin())
            })
            .collect();
        let figure = PopulationFigure {
            title: "smooth".into(),
            points: vec![],
            curves: vec![PopulationCurve {
                label: "curve".into(),
                points,
                dashed: false,
                group: 0,
            }],
        };
        let svg = svg_text(&figure).expect("draws");
        let (w, h) = theme::SIZE;
        let k = SVG_SUBPIXELS;
        assert!(
            svg.contains(&format!(
                r#"width="{w}" height="{h}" viewBox="0 0 {} {}""#,
                w * k,
                h * k
            )),
            "shown at its nominal size over a finer grid: {}",
            &svg[..200.min(svg.len())]
        );
        let drawn = polyline_points(&svg);
        assert!(drawn.len() > 100, "{} points", drawn.len());
        // In pixels, the points must take fractional values (1/8 px steps), not whole pixels only.
        let fractional = drawn
            .iter()
            .filter(|(_, y)| (y / f64::from(k)).fract() != 0.0)
            .count();
        assert!(
            fractional > drawn.len() / 2,
            "{fractional} of {} y coordinates off the whole-pixel grid",
            drawn.len()
        );
        // Outlined rectangles get a one-pixel frame, not a one-unit one.
        assert!(
            svg.lines()
                .filter(|l| l.starts_with("<rect") && l.contains(r#"fill="none""#))
                .all(|l| l.matches("stroke-width").count() == 1),
            "a frame without a stroke width, or with two"
        );
        // The bitmap path still draws at one unit per pixel.
        assert_eq!(Scale::ONE.px(5), 5);
        assert_eq!(Scale::new(SVG_SUBPIXELS).offset(-3), -24);
    }
}

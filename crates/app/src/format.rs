//! Numbers for people: significant figures, and scientific notation with superscript exponents
//! ("4.7×10⁷") where plain decimals would be long. No egui here.

use caldera_infer::summary::Interval;

const SUPERSCRIPTS: [char; 10] = ['⁰', '¹', '²', '³', '⁴', '⁵', '⁶', '⁷', '⁸', '⁹'];

/// An integer exponent in superscript digits ("⁻³").
fn superscript(exponent: i32) -> String {
    let mut out = String::new();
    if exponent < 0 {
        out.push('⁻');
    }
    for digit in exponent.unsigned_abs().to_string().chars() {
        out.push(digit.to_digit(10).map_or('?', |d| SUPERSCRIPTS[d as usize]));
    }
    out
}

/// `value` with `digits` significant figures: plain decimals between 10⁻³ and 10⁵, otherwise
/// "m×10ᵉ". Trailing zeros after a decimal point are kept (they are significant).
#[must_use]
pub fn significant(value: f64, digits: u32) -> String {
    if !value.is_finite() {
        return "–".into();
    }
    if value == 0.0 {
        return "0".into();
    }
    let digits = digits.max(1) as i32;
    // Round to the significant figures first, so 9.96 → 10 and 99 999 → 1.0×10⁵.
    let scale = 10f64.powi(value.abs().log10().floor() as i32 - digits + 1);
    let rounded = (value / scale).round() * scale;
    let exponent = rounded.abs().log10().floor() as i32;
    let decimals = (digits - 1 - exponent).max(0) as usize;
    if (-3..5).contains(&exponent) {
        format!("{rounded:.decimals$}")
    } else {
        let mantissa = rounded / 10f64.powi(exponent);
        let decimals = (digits - 1) as usize;
        format!("{mantissa:.decimals$}×10{}", superscript(exponent))
    }
}

/// `value` for a slider's edit box: four significant figures, plain decimals between 10⁻³ and
/// 10⁵, otherwise Rust's exponent form ("5.320e7"), so what is shown can be typed back.
#[must_use]
pub fn editable(value: f64) -> String {
    if !value.is_finite() || value == 0.0 {
        return format!("{value}");
    }
    let exponent = value.abs().log10().floor() as i32;
    if (-3..5).contains(&exponent) {
        let decimals = (3 - exponent).max(0) as usize;
        format!("{value:.decimals$}")
    } else {
        format!("{value:.3e}")
    }
}

/// A posterior summary as "median (+up / −down)" with the median to the precision of its
/// smaller error (two significant figures of it), and the percentiles named.
#[must_use]
pub fn interval(i: &Interval, unit: &str) -> String {
    let unit = if unit.is_empty() {
        String::new()
    } else {
        format!(" {unit}")
    };
    if let Some(limit) = i.upper95 {
        return format!("< {}{unit} (95% upper limit)", significant(limit, 2));
    }
    let (up, down) = (i.p84 - i.median, i.median - i.p16);
    let smaller = up.min(down).abs();
    let digits = if smaller > 0.0 && i.median != 0.0 {
        let places = (i.median.abs().log10().floor() - smaller.log10().floor()) as i32 + 2;
        places.clamp(1, 6) as u32
    } else {
        3
    };
    format!(
        "{} (+{} / −{}){unit}  (median, 16–84%)",
        significant(i.median, digits),
        significant(up, 2),
        significant(down, 2)
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn significant_figures_and_superscripts() {
        assert_eq!(significant(7.414, 2), "7.4");
        assert_eq!(significant(22.455, 2), "22");
        assert_eq!(significant(0.316, 2), "0.32");
        assert_eq!(significant(9.96, 2), "10");
        assert_eq!(significant(47_091_051.078, 3), "4.71×10⁷");
        assert_eq!(significant(35_940_220_946.16, 3), "3.59×10¹⁰");
        assert_eq!(significant(1e-8, 2), "1.0×10⁻⁸");
        assert_eq!(significant(-0.000_012_3, 2), "-1.2×10⁻⁵");
        assert_eq!(significant(99_999.0, 2), "1.0×10⁵");
        assert_eq!(significant(0.0, 3), "0");
    }

    #[test]
    fn slider_numbers_have_four_figures_and_read_back() {
        assert_eq!(editable(36.519_23), "36.52");
        assert_eq!(editable(1.0), "1.000");
        assert_eq!(editable(0.012_345), "0.01235");
        assert_eq!(editable(53_200_000.0), "5.320e7");
        for v in [36.519_23, 0.012_345, 53_200_000.0, 4e-5] {
            let back: f64 = editable(v).parse().expect("parses");
            assert!((back / v - 1.0).abs() < 1e-3, "{v} → {}", editable(v));
        }
    }

    #[test]
    fn intervals_name_their_percentiles() {
        let i = Interval {
            median: 7.414,
            p16: 1.522,
            p84: 29.869,
            p2_5: 0.5,
            p97_5: 60.0,
            upper95: None,
        };
        assert_eq!(
            interval(&i, "cm²/g"),
            "7.4 (+22 / −5.9) cm²/g  (median, 16–84%)"
        );
        let limit = Interval {
            upper95: Some(0.8712),
            ..i
        };
        assert_eq!(interval(&limit, "cm²/g"), "< 0.87 cm²/g (95% upper limit)");
    }
}

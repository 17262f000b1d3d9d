//! Look (colours, type) and drawing plumbing shared by every plot.

use super::*;

// ---------------------------------------------------------------------------------------
// Look: colours and type.

pub(super) const WIDTH: u32 = 980;
pub(super) const BG: RGBColor = RGBColor(252, 251, 248);
pub(super) const INK: RGBColor = RGBColor(34, 38, 46);
pub(super) const MUTED: RGBColor = RGBColor(105, 110, 120);
pub(super) const GRID: RGBColor = RGBColor(226, 224, 217);
pub(super) const STRIPE: RGBColor = RGBColor(243, 241, 235);
pub(super) const SPAN: RGBColor = RGBColor(150, 176, 201);
pub(super) const POINT: RGBColor = RGBColor(28, 74, 118);
pub(super) const GOOD: RGBColor = RGBColor(210, 124, 32);
pub(super) const GOOD_DARK: RGBColor = RGBColor(140, 72, 8);
pub(super) const LOW: RGBColor = RGBColor(246, 244, 238);
pub(super) const HIGH: RGBColor = RGBColor(22, 98, 104);
pub(super) const NEG: RGBColor = RGBColor(60, 90, 160);
pub(super) const POS: RGBColor = RGBColor(176, 72, 40);
pub(super) const FONT: &str = "sans-serif";

/// Plotters' SVG backend writes `font-size = size / 1.24`; ask for rendered pixels.
pub(super) fn font(px: f64) -> TextStyle<'static> {
    TextStyle::from((FONT, px * 1.24).into_font()).color(&INK)
}

pub(super) fn font_at(px: f64, color: &'static RGBColor, h: HPos, v: VPos) -> TextStyle<'static> {
    TextStyle::from((FONT, px * 1.24).into_font())
        .color(color)
        .pos(Pos::new(h, v))
}

pub(super) fn bold_at(px: f64, h: HPos, v: VPos) -> TextStyle<'static> {
    TextStyle::from((FONT, px * 1.24, FontStyle::Bold).into_font())
        .color(&INK)
        .pos(Pos::new(h, v))
}

pub(super) fn mix(a: &RGBColor, b: &RGBColor, t: f64) -> RGBColor {
    let t = if t.is_finite() {
        t.clamp(0.0, 1.0)
    } else {
        0.0
    };
    let c = |x: u8, y: u8| (x as f64 + (y as f64 - x as f64) * t).round() as u8;
    RGBColor(c(a.0, b.0), c(a.1, b.1), c(a.2, b.2))
}

/// Sequential scale for shares in [0, 1].
pub(super) fn seq(t: f64) -> RGBColor {
    mix(&LOW, &HIGH, t.sqrt())
}

/// Diverging scale for tau in [-1, 1].
pub(super) fn div(t: f64) -> RGBColor {
    if !t.is_finite() {
        return GRID;
    }
    if t >= 0.0 {
        mix(&LOW, &POS, t)
    } else {
        mix(&LOW, &NEG, -t)
    }
}

// ---------------------------------------------------------------------------------------
// Drawing plumbing.

/// A drawing failure (plotters' error as text).
pub(super) struct Fail(pub(super) String);

impl<E: std::error::Error> From<E> for Fail {
    fn from(e: E) -> Self {
        Fail(e.to_string())
    }
}

pub(super) type R<T> = std::result::Result<T, Fail>;
pub(super) type Area<'a> = DrawingArea<SVGBackend<'a>, Shift>;

/// Pixel rectangle (x0, y0, x1, y1) of a data region.
pub(super) type Mark = (i32, i32, i32, i32);

pub(super) fn rect(area: &Area, x0: i32, y0: i32, x1: i32, y1: i32, color: &RGBColor) -> R<()> {
    area.draw(&Rectangle::new([(x0, y0), (x1, y1)], color.filled()))?;
    Ok(())
}

pub(super) fn hline(area: &Area, x0: i32, x1: i32, y: i32, color: &RGBColor, w: u32) -> R<()> {
    area.draw(&PathElement::new(
        vec![(x0, y), (x1, y)],
        color.stroke_width(w),
    ))?;
    Ok(())
}

pub(super) fn vline(area: &Area, x: i32, y0: i32, y1: i32, color: &RGBColor, w: u32) -> R<()> {
    area.draw(&PathElement::new(
        vec![(x, y0), (x, y1)],
        color.stroke_width(w),
    ))?;
    Ok(())
}

pub(super) fn text(area: &Area, s: &str, x: i32, y: i32, style: &TextStyle) -> R<()> {
    area.draw(&Text::new(s.to_string(), (x, y), style.clone()))?;
    Ok(())
}

/// Greedy word wrap to about `chars` characters a line.
pub(super) fn wrap(s: &str, chars: usize) -> Vec<String> {
    let mut lines = Vec::new();
    let mut cur = String::new();
    for word in s.split_whitespace() {
        if !cur.is_empty() && cur.chars().count() + 1 + word.chars().count() > chars {
            lines.push(std::mem::take(&mut cur));
        }
        if !cur.is_empty() {
            cur.push(' ');
        }
        cur.push_str(word);
    }
    if !cur.is_empty() {
        lines.push(cur);
    }
    lines
}

/// A label cut to `chars` characters (with an ellipsis).
pub(super) fn clip(s: &str, chars: usize) -> String {
    if s.chars().count() <= chars {
        s.to_string()
    } else {
        let mut out: String = s.chars().take(chars.saturating_sub(1)).collect();
        out.push('\u{2026}');
        out
    }
}

/// A short number for ticks and labels.
pub(crate) fn num(v: f64) -> String {
    if !v.is_finite() {
        return "NA".into();
    }
    let a = v.abs();
    if a == 0.0 {
        "0".into()
    } else if !(1e-3..1e5).contains(&a) {
        format!("{v:.2e}")
    } else {
        let digits = (3 - a.log10().floor() as i32).clamp(0, 6) as usize;
        let s = format!("{v:.digits$}");
        if s.contains('.') {
            s.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            s
        }
    }
}

pub(super) fn pct(v: f64) -> String {
    if v.is_finite() {
        format!("{:.0}%", 100.0 * v)
    } else {
        "NA".into()
    }
}

/// A padded [lo, hi] axis range over finite values (a unit range when there are none).
pub(super) fn range(values: impl IntoIterator<Item = f64>) -> (f64, f64) {
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for v in values.into_iter().filter(|v| v.is_finite()) {
        lo = lo.min(v);
        hi = hi.max(v);
    }
    if !lo.is_finite() {
        return (0.0, 1.0);
    }
    let pad = if hi > lo {
        0.04 * (hi - lo)
    } else {
        0.05 * lo.abs().max(1e-9)
    };
    (lo - pad, hi + pad)
}

/// Draw one figure: background, title, body (`body_h` pixels, drawn by `body` with the top
/// of the body as its second argument), caption. Returns the SVG text.
pub(super) fn figure(
    file: &str,
    title: &str,
    caption: &str,
    body_h: u32,
    body: impl FnOnce(&Area, i32, &mut Vec<Mark>) -> R<()>,
) -> Result<Plot> {
    let cap_lines = wrap(caption, 165);
    let top = 44;
    let height = top as u32 + body_h + 14 + 16 * cap_lines.len() as u32 + 8;
    let mut svg = String::new();
    let mut marks = Vec::new();
    let drawn = (|| -> R<()> {
        let root = SVGBackend::with_string(&mut svg, (WIDTH, height)).into_drawing_area();
        root.fill(&BG)?;
        text(
            &root,
            title,
            16,
            22,
            &bold_at(16.0, HPos::Left, VPos::Center),
        )?;
        body(&root, top, &mut marks)?;
        let cap = font_at(12.0, &MUTED, HPos::Left, VPos::Center);
        let y0 = top + body_h as i32 + 14;
        for (i, line) in cap_lines.iter().enumerate() {
            text(&root, line, 16, y0 + 16 * i as i32, &cap)?;
        }
        root.present()?;
        Ok(())
    })();
    drawn.map_err(|Fail(msg)| Error::Output {
        path: PathBuf::from(file),
        msg: format!("drawing the plot failed: {msg}"),
    })?;
    Ok(Plot {
        file: file.to_string(),
        title: title.to_string(),
        caption: caption.to_string(),
        svg: finish_svg(svg, title, caption, &marks),
    })
}

/// Add an accessible title and description, a class, and the data-region markers.
pub(super) fn finish_svg(svg: String, title: &str, caption: &str, marks: &[Mark]) -> String {
    let Some(open_end) = svg.find('>') else {
        return svg;
    };
    let mut out = String::with_capacity(svg.len() + 512);
    let head = &svg[..open_end];
    out.push_str(head.trim_end_matches('/'));
    out.push_str(" class=\"fm-plot\" role=\"img\">\n<title>");
    out.push_str(&escape(title));
    out.push_str("</title>\n<desc>");
    out.push_str(&escape(caption));
    out.push_str("</desc>");
    let rest = &svg[open_end + 1..];
    let close = rest.rfind("</svg>").unwrap_or(rest.len());
    out.push_str(&rest[..close]);
    for (x0, y0, x1, y1) in marks {
        out.push_str(&format!(
            "<rect class=\"fm-data\" x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"none\" stroke=\"none\"/>\n",
            x0.min(x1),
            y0.min(y1),
            (x1 - x0).abs().max(1),
            (y1 - y0).abs().max(1)
        ));
    }
    out.push_str("</svg>\n");
    out
}

/// Escape text for XML/HTML content and attributes.
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c if (c as u32) < 0x20 && c != '\n' && c != '\t' && c != '\r' => out.push('\u{fffd}'),
            c => out.push(c),
        }
    }
    out
}

/// A file-name-safe form of a level or kind name.
pub(super) fn slug(s: &str) -> String {
    let out: String = s
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() {
                c.to_ascii_lowercase()
            } else {
                '-'
            }
        })
        .collect();
    if out.is_empty() {
        "x".into()
    } else {
        out
    }
}

/// What one importance kind measures, with its unit.
pub(super) fn importance_unit(kind: &str) -> &'static str {
    match kind {
        "permutation" => "increase in out-of-fold MSE when permuted (outcome units squared)",
        "coefficient" => "|coefficient| x training sd of the input (outcome units)",
        "impurity" => "impurity decrease, as a share of the tree's total (no unit)",
        _ => "importance as stored in the run's importance table",
    }
}

/// The metric's name for axis labels.
pub(super) fn metric_label(report: &Report) -> String {
    let m = if report.meta.metric.is_empty() {
        "error"
    } else {
        report.meta.metric.as_str()
    };
    format!("{m} (outcome units)")
}

/// Index of the good-set definition the report uses.
pub(super) fn good_index(report: &Report) -> usize {
    GOOD_DEFINITIONS
        .iter()
        .position(|d| *d == report.meta.good)
        .unwrap_or(0)
}

pub(super) fn min_max(v: &[f64]) -> (f64, f64) {
    v.iter()
        .filter(|x| x.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
            (a.min(x), b.max(x))
        })
}

/// Median of the finite values (NaN when there are none).
pub(super) fn median(v: &[f64]) -> f64 {
    let mut s: Vec<f64> = v.iter().copied().filter(|x| x.is_finite()).collect();
    if s.is_empty() {
        return f64::NAN;
    }
    s.sort_by(f64::total_cmp);
    let m = s.len() / 2;
    if s.len() % 2 == 1 {
        s[m]
    } else {
        0.5 * (s[m - 1] + s[m])
    }
}

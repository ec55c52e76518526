//! The generalized eigenvalues of the pencil in the complex plane, against the stability
//! threshold (a dashed circle of radius `threshold`): stable roots filled, unstable ones hollow.
//!
//! The frame is the square `[-R, R]^2` with `R = clamp(1.15 * largest finite modulus,
//! 1.3 * threshold, 3 * threshold)`, so the threshold circle is always inside and well visible;
//! roots beyond the frame are drawn on its edge along their direction (as triangles pointing
//! outward) and counted in a note, infinite roots only counted.

use super::layout::wrap;
use super::text::escape;
use super::ticks::{format_ticks, inside_ticks};
use super::{num, open_document, text_element, AXIS, GRID, INK, MUTED};
use crate::solution::Root;

const SIZE: f64 = 360.0;
const LEFT: f64 = 58.0;
const RIGHT: f64 = 14.0;
const TOP: f64 = 14.0;
const TICK_SIZE: f64 = 10.5;
const NOTE_SIZE: f64 = 10.5;
const STABLE: &str = "#0072B2";
const UNSTABLE: &str = "#D55E00";

/// A whole SVG document: `roots` in the complex plane with the threshold circle.
pub fn root_plot(roots: &[Root], threshold: f64) -> String {
    let threshold = if threshold.is_finite() && threshold > 0.0 {
        threshold
    } else {
        1.0
    };
    let finite: Vec<&Root> = roots
        .iter()
        .filter(|r| !r.infinite && r.re.is_finite() && r.im.is_finite())
        .collect();
    let infinite = roots.len() - finite.len();
    let largest = finite
        .iter()
        .map(|r| r.re.hypot(r.im))
        .fold(0.0f64, f64::max);
    let radius = (1.15 * largest).clamp(1.3 * threshold, 3.0 * threshold);

    let plot = SIZE - LEFT - RIGHT;
    let (x0, y0) = (LEFT, TOP);
    let px = |re: f64| x0 + (re + radius) / (2.0 * radius) * plot;
    let py = |im: f64| y0 + (radius - im) / (2.0 * radius) * plot;

    let mut body = String::new();
    // Frame, grid and axes.
    let ticks = inside_ticks(-radius, radius, 7);
    let (labels, note) = format_ticks(&ticks);
    for (v, l) in ticks.values.iter().zip(&labels) {
        if *v != 0.0 {
            body.push_str(&line(px(*v), y0, px(*v), y0 + plot, GRID, 1.0, ""));
            body.push_str(&line(x0, py(*v), x0 + plot, py(*v), GRID, 1.0, ""));
        }
        text_element(
            &mut body,
            px(*v),
            y0 + plot + 15.0,
            &format!("font-size=\"{TICK_SIZE}\" fill=\"{MUTED}\" text-anchor=\"middle\""),
            l,
        );
        text_element(
            &mut body,
            x0 - 6.0,
            py(*v) + TICK_SIZE * 0.35,
            &format!("font-size=\"{TICK_SIZE}\" fill=\"{MUTED}\" text-anchor=\"end\""),
            l,
        );
    }
    body.push_str(&line(x0, py(0.0), x0 + plot, py(0.0), AXIS, 1.0, ""));
    body.push_str(&line(px(0.0), y0, px(0.0), y0 + plot, AXIS, 1.0, ""));
    body.push_str(&format!(
        "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"none\" stroke=\"{AXIS}\" stroke-width=\"1\"/>\n",
        num(x0),
        num(y0),
        num(plot),
        num(plot)
    ));
    let r_px = threshold / (2.0 * radius) * plot;
    body.push_str(&format!(
        "<circle cx=\"{}\" cy=\"{}\" r=\"{}\" fill=\"none\" stroke=\"{INK}\" stroke-width=\"1.2\" stroke-dasharray=\"5 4\" class=\"threshold\"/>\n",
        num(px(0.0)),
        num(py(0.0)),
        num(r_px)
    ));
    let angle = std::f64::consts::FRAC_PI_4;
    text_element(
        &mut body,
        px(0.0) + r_px * angle.cos() + 4.0,
        py(0.0) - r_px * angle.sin() - 4.0,
        &format!("font-size=\"{TICK_SIZE}\" fill=\"{INK}\""),
        &format!("|\u{3bb}| = {}", trim(threshold)),
    );
    text_element(
        &mut body,
        x0 + 0.5 * plot,
        y0 + plot + 32.0,
        &format!("font-size=\"11.5\" fill=\"{MUTED}\" text-anchor=\"middle\""),
        "real part",
    );
    body.push_str(&format!(
        "<text x=\"0\" y=\"0\" transform=\"translate({} {}) rotate(-90)\" text-anchor=\"middle\" font-size=\"11.5\" fill=\"{MUTED}\">imaginary part</text>\n",
        num(16.0),
        num(y0 + 0.5 * plot)
    ));

    // Roots: unstable drawn last so they sit on top.
    let mut beyond = 0usize;
    for r in finite
        .iter()
        .filter(|r| r.stable)
        .chain(finite.iter().filter(|r| !r.stable))
    {
        let m = r.re.hypot(r.im);
        let (colour, fill) = if r.stable {
            (STABLE, STABLE)
        } else {
            (UNSTABLE, "#ffffff")
        };
        let tip = format!(
            "{} root {} {} {}i, modulus {}",
            if r.stable { "stable" } else { "unstable" },
            trim(r.re),
            if r.im < 0.0 { "\u{2212}" } else { "+" },
            trim(r.im.abs()),
            trim(m)
        );
        if m > radius * 0.98 {
            beyond += 1;
            let a = r.im.atan2(r.re);
            let edge = 0.97 * radius;
            // The frame is a square: stop at its side along the root's direction.
            let scale = edge / a.cos().abs().max(a.sin().abs());
            let (cx, cy) = (px(scale * a.cos()), py(scale * a.sin()));
            let (ux, uy) = (a.cos(), -a.sin());
            let (vx, vy) = (-uy, ux);
            let pts = [
                (cx + 6.0 * ux, cy + 6.0 * uy),
                (cx - 4.0 * ux + 4.5 * vx, cy - 4.0 * uy + 4.5 * vy),
                (cx - 4.0 * ux - 4.5 * vx, cy - 4.0 * uy - 4.5 * vy),
            ];
            body.push_str(&format!(
                "<polygon points=\"{}\" fill=\"{fill}\" stroke=\"{colour}\" stroke-width=\"1.8\"><title>{}</title></polygon>\n",
                pts.iter()
                    .map(|(x, y)| format!("{},{}", num(*x), num(*y)))
                    .collect::<Vec<_>>()
                    .join(" "),
                escape(&tip)
            ));
        } else {
            body.push_str(&format!(
                "<circle cx=\"{}\" cy=\"{}\" r=\"4.5\" fill=\"{fill}\" stroke=\"{colour}\" stroke-width=\"1.8\" class=\"root\"><title>{}</title></circle>\n",
                num(px(r.re)),
                num(py(r.im)),
                escape(&tip)
            ));
        }
    }

    // Legend and notes.
    let stable = finite.iter().filter(|r| r.stable).count();
    let unstable = finite.len() - stable;
    let mut y = y0 + plot + 56.0;
    body.push_str(&format!(
        "<circle cx=\"{}\" cy=\"{}\" r=\"4.5\" fill=\"{STABLE}\" stroke=\"{STABLE}\" stroke-width=\"1.8\"/>\n",
        num(x0 + 5.0),
        num(y - 4.0)
    ));
    text_element(
        &mut body,
        x0 + 15.0,
        y,
        &format!("font-size=\"12\" fill=\"{INK}\""),
        &format!("stable ({stable})"),
    );
    body.push_str(&format!(
        "<circle cx=\"{}\" cy=\"{}\" r=\"4.5\" fill=\"#ffffff\" stroke=\"{UNSTABLE}\" stroke-width=\"1.8\"/>\n",
        num(x0 + 115.0),
        num(y - 4.0)
    ));
    text_element(
        &mut body,
        x0 + 125.0,
        y,
        &format!("font-size=\"12\" fill=\"{INK}\""),
        &format!("unstable ({})", unstable + infinite),
    );
    let mut notes = Vec::new();
    if let Some(n) = note {
        notes.push(format!("Axis values {n}."));
    }
    if beyond > 0 {
        notes.push(format!(
            "{beyond} root{} outside the frame drawn on its edge.",
            if beyond == 1 { "" } else { "s" }
        ));
    }
    if infinite > 0 {
        notes.push(format!(
            "{infinite} infinite root{} (unstable) not drawn.",
            if infinite == 1 { "" } else { "s" }
        ));
    }
    for n in &notes {
        for l in wrap(n, NOTE_SIZE, SIZE - LEFT - RIGHT) {
            y += NOTE_SIZE + 5.0;
            text_element(
                &mut body,
                x0,
                y,
                &format!("font-size=\"{NOTE_SIZE}\" fill=\"{MUTED}\" class=\"note\""),
                &l,
            );
        }
    }
    let height = y + 12.0;
    let mut out = String::new();
    open_document(
        &mut out,
        SIZE,
        height,
        "Roots of the pencil and the stability threshold",
        &format!("{stable} stable, {} unstable roots", unstable + infinite),
    );
    out.push_str(&body);
    out.push_str("</svg>\n");
    out
}

fn line(x1: f64, y1: f64, x2: f64, y2: f64, colour: &str, w: f64, class: &str) -> String {
    let class = if class.is_empty() {
        String::new()
    } else {
        format!(" class=\"{class}\"")
    };
    format!(
        "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{colour}\" stroke-width=\"{}\"{class}/>\n",
        num(x1),
        num(y1),
        num(x2),
        num(y2),
        num(w)
    )
}

/// A short decimal for labels (up to four significant digits, true minus).
fn trim(x: f64) -> String {
    let s = format!("{:.4}", x);
    let s = s.trim_end_matches('0').trim_end_matches('.').to_string();
    super::ticks::signed(&s)
}

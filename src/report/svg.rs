//! A minimal SVG writer: elements with inline presentation attributes, every text escaped, every
//! coordinate printed with one decimal so the same input gives byte-identical files.

use std::fmt::Write as _;

/// Escapes text for XML/HTML content and attribute values.
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            // Control characters other than tab and newline are not allowed in XML 1.0.
            c if c.is_control() && c != '\t' && c != '\n' => out.push('\u{FFFD}'),
            c => out.push(c),
        }
    }
    out
}

/// A coordinate in user units, one decimal, without a trailing `.0` or a negative zero.
pub fn coord(value: f64) -> String {
    let rounded = (value * 10.0).round() / 10.0;
    let text = format!("{rounded:.1}");
    let text = text.strip_suffix(".0").unwrap_or(&text);
    if text == "-0" {
        "0".to_string()
    } else {
        text.to_string()
    }
}

/// How a stroke looks.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Stroke {
    pub color: &'static str,
    pub width: f64,
    /// `stroke-dasharray`, e.g. `"6 4"`; `None` for a solid line.
    pub dash: Option<&'static str>,
}

impl Stroke {
    pub const fn solid(color: &'static str, width: f64) -> Self {
        Self {
            color,
            width,
            dash: None,
        }
    }

    pub const fn dashed(color: &'static str, width: f64, dash: &'static str) -> Self {
        Self {
            color,
            width,
            dash: Some(dash),
        }
    }

    fn attributes(&self) -> String {
        let mut out = format!(
            r#" fill="none" stroke="{}" stroke-width="{}""#,
            self.color,
            coord(self.width)
        );
        if let Some(dash) = self.dash {
            let _ = write!(out, r#" stroke-dasharray="{dash}""#);
        }
        out
    }
}

/// Horizontal anchoring of a text.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Anchor {
    Start,
    Middle,
    End,
}

impl Anchor {
    fn name(self) -> &'static str {
        match self {
            Anchor::Start => "start",
            Anchor::Middle => "middle",
            Anchor::End => "end",
        }
    }
}

/// How a text looks.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TextStyle {
    pub size: f64,
    pub anchor: Anchor,
    pub bold: bool,
    pub color: &'static str,
    /// Rotated a quarter turn anticlockwise (vertical axis labels).
    pub vertical: bool,
}

impl TextStyle {
    pub const fn plain(size: f64, anchor: Anchor) -> Self {
        Self {
            size,
            anchor,
            bold: false,
            color: "#222222",
            vertical: false,
        }
    }
}

/// An SVG document being written.
pub struct Svg {
    body: String,
}

impl Svg {
    /// Starts a document of the given size; `title` becomes its accessible name.
    pub fn new(width: f64, height: f64, title: &str) -> Self {
        let mut body = String::with_capacity(16 * 1024);
        let _ = write!(
            body,
            concat!(
                r#"<svg xmlns="http://www.w3.org/2000/svg" width="{w}" height="{h}" "#,
                r#"viewBox="0 0 {w} {h}" role="img" "#,
                r#"font-family="DejaVu Sans, Verdana, Arial, Helvetica, sans-serif">"#,
                "\n<title>{t}</title>\n",
                r##"<rect width="{w}" height="{h}" fill="#ffffff"/>"##,
                "\n"
            ),
            w = coord(width),
            h = coord(height),
            t = escape(title)
        );
        Self { body }
    }

    pub fn line(&mut self, from: (f64, f64), to: (f64, f64), stroke: &Stroke) {
        let _ = writeln!(
            self.body,
            r#"<path d="M{} {}L{} {}"{}/>"#,
            coord(from.0),
            coord(from.1),
            coord(to.0),
            coord(to.1),
            stroke.attributes()
        );
    }

    /// A path from raw path data drawn with a stroke.
    pub fn stroked_path(&mut self, data: &str, stroke: &Stroke, round_caps: bool) {
        if data.is_empty() {
            return;
        }
        let caps = if round_caps {
            r#" stroke-linecap="round" stroke-linejoin="round""#
        } else {
            ""
        };
        let _ = writeln!(
            self.body,
            r#"<path d="{data}"{}{caps}/>"#,
            stroke.attributes()
        );
    }

    /// A path from raw path data filled with a colour.
    pub fn filled_path(&mut self, data: &str, color: &str, opacity: f64) {
        if data.is_empty() {
            return;
        }
        let _ = writeln!(
            self.body,
            r#"<path d="{data}" fill="{color}" fill-opacity="{opacity:.2}"/>"#
        );
    }

    /// A rectangle given by two corners, filled and optionally outlined.
    pub fn rect(
        &mut self,
        corner: (f64, f64),
        size: (f64, f64),
        fill: &str,
        outline: Option<&Stroke>,
    ) {
        let outline = outline.map_or(String::new(), |s| {
            let a = s.attributes();
            a.replacen(r#" fill="none""#, "", 1)
        });
        let _ = writeln!(
            self.body,
            r#"<rect x="{}" y="{}" width="{}" height="{}" fill="{fill}"{outline}/>"#,
            coord(corner.0),
            coord(corner.1),
            coord(size.0.max(0.0)),
            coord(size.1.max(0.0))
        );
    }

    pub fn text(&mut self, at: (f64, f64), content: &str, style: &TextStyle) {
        let weight = if style.bold {
            r#" font-weight="bold""#
        } else {
            ""
        };
        let rotate = if style.vertical {
            format!(
                r#" transform="rotate(-90 {} {})""#,
                coord(at.0),
                coord(at.1)
            )
        } else {
            String::new()
        };
        let _ = writeln!(
            self.body,
            r#"<text x="{}" y="{}" font-size="{}" text-anchor="{}" fill="{}"{weight}{rotate}>{}</text>"#,
            coord(at.0),
            coord(at.1),
            coord(style.size),
            style.anchor.name(),
            style.color,
            escape(content)
        );
    }

    /// Closes the document.
    pub fn finish(mut self) -> String {
        self.body.push_str("</svg>\n");
        self.body
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escapes_markup_and_quotes() {
        assert_eq!(
            escape(r#"<a href="x">&'"#),
            "&lt;a href=&quot;x&quot;&gt;&amp;&#39;"
        );
        assert_eq!(escape("bell\u{7}"), "bell\u{FFFD}");
    }

    #[test]
    fn coordinates_are_short_and_stable() {
        assert_eq!(coord(12.0), "12");
        assert_eq!(coord(12.34), "12.3");
        assert_eq!(coord(-0.04), "0");
        assert_eq!(coord(-3.25), "-3.3");
    }

    #[test]
    fn text_is_escaped_inside_documents() {
        let mut svg = Svg::new(100.0, 50.0, "a < b");
        svg.text((1.0, 2.0), "x & y", &TextStyle::plain(10.0, Anchor::Start));
        let doc = svg.finish();
        assert!(doc.contains("<title>a &lt; b</title>"));
        assert!(doc.contains(">x &amp; y</text>"));
        assert!(doc.ends_with("</svg>\n"));
    }
}

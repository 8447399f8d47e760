//! The document's Markdown primitives: GitHub-flavoured tables that paste into a wiki or an email,
//! charts written as SVG files beside the document and referenced by name.

use super::{Chart, Markup, Span};
use crate::report::Grid;
use crate::report::svg::visible;

#[derive(Debug)]
pub struct Document {
    /// Chart files are named `STEM-NAME.svg`, beside the document.
    stem: String,
    text: String,
    files: Vec<(String, Vec<u8>)>,
}

/// Text that Markdown shows as written: its punctuation escaped (a `|` would end a table cell, a
/// backtick open code), angle brackets and ampersands as entities (no raw HTML), one line.
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in visible(&s.replace(['\n', '\r'], " ")).chars() {
        match c {
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '&' => out.push_str("&amp;"),
            '\\' | '`' | '*' | '_' | '[' | ']' | '|' | '~' => {
                out.push('\\');
                out.push(c);
            }
            _ => out.push(c),
        }
    }
    out
}

/// Escaped text that opens a line: a leading `-`, `+`, `#` or `1.` would start a list or a heading.
fn line_start(s: String) -> String {
    let mut out = s;
    if out.starts_with(['-', '+', '=', '#']) {
        out.insert(0, '\\');
    }
    let digits = out.chars().take_while(char::is_ascii_digit).count();
    if digits > 0 && out[digits..].starts_with(['.', ')']) {
        out.insert(digits, '\\');
    }
    out
}

fn spans(spans: &[Span]) -> String {
    let text: String = spans
        .iter()
        .map(|s| match s {
            Span::Text(t) => escape(t),
            // First-strong isolate .. pop directional isolate: the name cannot reorder the sentence.
            Span::Name(n) => format!("\u{2068}{}\u{2069}", escape(n)),
        })
        .collect();
    line_start(text)
}

/// Markdown has one header row: "group\ncolumn" becomes "group: column", "\ncolumn" "column".
fn header_label(header: &str) -> String {
    match header.split_once('\n') {
        Some(("", label)) => label.to_string(),
        Some((group, label)) => format!("{group}: {label}"),
        None => header.to_string(),
    }
}

impl Document {
    pub fn new(stem: &str) -> Document {
        Document {
            stem: stem.to_string(),
            text: String::new(),
            files: Vec::new(),
        }
    }

    pub fn finish(self) -> (Vec<u8>, Vec<(String, Vec<u8>)>) {
        (self.text.into_bytes(), self.files)
    }

    fn block(&mut self, s: &str) {
        self.text.push_str(s);
        self.text.push_str("\n\n");
    }
}

impl Markup for Document {
    fn title(&mut self, title: &str, lede: &str) {
        self.block(&format!("# {}", escape(title)));
        self.block(&format!("*{}*", escape(lede)));
    }

    fn heading(&mut self, _id: &str, text: &str) {
        self.block(&format!("## {}", escape(text)));
    }

    fn paragraph(&mut self, s: &[Span]) {
        self.block(&spans(s));
    }

    fn list(&mut self, items: &[Vec<Span>]) {
        let lines: Vec<String> = items.iter().map(|i| format!("- {}", spans(i))).collect();
        self.block(&lines.join("\n"));
    }

    fn facts(&mut self, facts: &[(&str, String)]) {
        let lines: Vec<String> = facts
            .iter()
            .map(|(k, v)| format!("- **{}:** {}", escape(k), escape(v)))
            .collect();
        self.block(&lines.join("\n"));
    }

    fn table(&mut self, _id: &str, caption: &str, grid: &Grid) {
        let (g, folded) = grid.folded();
        let mut caption_line: String = folded
            .iter()
            .map(|(k, v)| format!("{}: {}. ", escape(k), escape(v)))
            .collect();
        caption_line.push_str(&escape(caption));
        let row = |cells: Vec<String>| format!("| {} |", cells.join(" | "));
        let mut lines = vec![
            caption_line,
            String::new(),
            row(g.header.iter().map(|h| escape(&header_label(h))).collect()),
            row((0..g.header.len())
                .map(|i| if g.is_text(i) { "---" } else { "---:" }.to_string())
                .collect()),
        ];
        for r in &g.rows {
            lines.push(row(r.iter().map(|c| escape(c)).collect()));
        }
        self.block(&lines.join("\n"));
    }

    fn figure(&mut self, chart: &Chart) {
        let file = format!("{}-{}.svg", self.stem, chart.name);
        self.block(&format!(
            "![{}]({})",
            escape(&chart.caption),
            file.replace(' ', "%20")
                .replace('(', "%28")
                .replace(')', "%29")
        ));
        self.files.push((file, chart.svg.clone().into_bytes()));
    }

    fn caution(&mut self, text: &str) {
        self.block(&format!("> **Caution.** {}", escape(text)));
    }

    fn footer(&mut self, text: &str) {
        self.block(&format!("---\n\n{}", escape(text)));
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn markdown_metacharacters_are_escaped() {
        // GitHub-flavoured Markdown: `|` ends a table cell, backticks open code, * and _ emphasis.
        assert_eq!(escape("Pipe | Club"), "Pipe \\| Club");
        assert_eq!(escape("`x` *y* _z_"), "\\`x\\` \\*y\\* \\_z\\_");
        assert_eq!(escape("<b>&</b>"), "&lt;b&gt;&amp;&lt;/b&gt;");
        assert_eq!(escape("two\nlines"), "two lines");
        assert_eq!(escape("bell\u{7}"), "bell\u{fffd}");
        assert_eq!(line_start("- x".into()), "\\- x");
        assert_eq!(line_start("1. x".into()), "1\\. x");
        assert_eq!(line_start("# x".into()), "\\# x");
        assert_eq!(header_label("the gap\nwins"), "the gap: wins");
        assert_eq!(header_label("\np"), "p");
    }
}

//! The document's HTML primitives: one self-contained page (stylesheet and SVG charts inline, no
//! script, nothing fetched). maud escapes every interpolated value; only our own stylesheet and the
//! SVG our chart code drew (whose text plotters escapes) go in unescaped.

use maud::{DOCTYPE, Markup as Html5, PreEscaped, html};

use super::{Chart, Markup, Span};
use crate::report::Grid;
use crate::report::svg::visible;

/// The stylesheet, a real file beside this one.
pub const CSS: &str = include_str!("document.css");

/// Nothing may be fetched: styles inline, images only as data, no scripts, no connections.
const POLICY: &str = "default-src 'none'; style-src 'unsafe-inline'; img-src data:";

#[derive(Debug, Default)]
pub struct Page {
    title: String,
    parts: Vec<Html5>,
}

fn spans(spans: &[Span]) -> Html5 {
    html! {
        @for s in spans {
            @match s {
                Span::Text(t) => (visible(t)),
                Span::Name(n) => bdi { (visible(n)) },
            }
        }
    }
}

/// A change column's cell carries its sign in text; the colour only repeats it.
fn cell_class(header: &str, cell: &str, text: bool) -> &'static str {
    if text {
        "text"
    } else if header.starts_with("change") && cell.starts_with('+') {
        "num up"
    } else if header.starts_with("change") && cell.starts_with('-') && cell.len() > 1 {
        "num down"
    } else {
        "num"
    }
}

/// A header's own label: "group\ncolumn" and "\ncolumn" both name the column "column".
fn column_label(header: &str) -> &str {
    header.split_once('\n').map_or(header, |(_, label)| label)
}

/// The header groups as (name, columns spanned): "group\ncolumn" opens a group, "\ncolumn" continues
/// it, a header without a line break stands in an unnamed group.
fn column_groups(headers: &[String]) -> Vec<(String, usize)> {
    let mut groups: Vec<(String, usize)> = Vec::new();
    for h in headers {
        match (h.split_once('\n'), groups.last_mut()) {
            (Some(("", _)), Some(last)) => last.1 += 1,
            (Some((name, _)), _) if !name.is_empty() => groups.push((name.to_string(), 1)),
            (None, Some(last)) if last.0.is_empty() => last.1 += 1,
            _ => groups.push((String::new(), 1)),
        }
    }
    groups
}

impl Page {
    pub fn new() -> Page {
        Page::default()
    }

    pub fn finish(self) -> Vec<u8> {
        let page = html! {
            (DOCTYPE)
            html lang="en" {
                head {
                    meta charset="utf-8";
                    meta name="viewport" content="width=device-width, initial-scale=1";
                    meta http-equiv="Content-Security-Policy" content=(POLICY);
                    title { (visible(&self.title)) }
                    style { (PreEscaped(CSS)) }
                }
                body {
                    main {
                        @for p in &self.parts { (p) }
                    }
                }
            }
        };
        let mut bytes = page.into_string().into_bytes();
        bytes.push(b'\n');
        bytes
    }
}

impl Markup for Page {
    fn title(&mut self, title: &str, lede: &str) {
        self.title = title.to_string();
        self.parts.push(html! {
            h1 { (visible(title)) }
            p.lede { (visible(lede)) }
        });
    }

    fn heading(&mut self, id: &str, text: &str) {
        self.parts.push(html! { h2 id=(id) { (visible(text)) } });
    }

    fn paragraph(&mut self, s: &[Span]) {
        self.parts.push(html! { p { (spans(s)) } });
    }

    fn list(&mut self, items: &[Vec<Span>]) {
        self.parts
            .push(html! { ul { @for i in items { li { (spans(i)) } } } });
    }

    fn facts(&mut self, facts: &[(&str, String)]) {
        self.parts.push(html! {
            dl.facts {
                @for (name, value) in facts {
                    dt { (visible(name)) }
                    dd { (visible(value)) }
                }
            }
        });
    }

    fn table(&mut self, id: &str, caption: &str, grid: &Grid) {
        let (g, folded) = grid.folded();
        let caption = folded
            .iter()
            .map(|(k, v)| format!("{k}: {v}. "))
            .collect::<String>()
            + caption;
        let note = format!("{id}-note");
        let groups = column_groups(&g.header);
        self.parts.push(html! {
            p.table-note id=(note) { (visible(&caption)) }
            div.scroll id=(id) role="region" aria-labelledby=(note) tabindex="0" {
                table aria-labelledby=(note) {
                    thead {
                        @if groups.iter().any(|(name, _)| !name.is_empty()) {
                            tr.groups {
                                @for (name, span) in &groups {
                                    th scope="colgroup" colspan=(span) { (visible(name)) }
                                }
                            }
                        }
                        tr {
                            @for (i, h) in g.header.iter().enumerate() {
                                th scope="col" class=(if g.is_text(i) { "text" } else { "num" }) { (visible(column_label(h))) }
                            }
                        }
                    }
                    tbody {
                        @for row in &g.rows {
                            tr {
                                @for (i, cell) in row.iter().enumerate() {
                                    @let class = cell_class(&g.header[i], cell, g.is_text(i));
                                    @if i == 0 {
                                        th scope="row" class=(class) { bdi { (visible(cell)) } }
                                    } @else if g.is_text(i) {
                                        td class=(class) { bdi { (visible(cell)) } }
                                    } @else {
                                        td class=(class) { (visible(cell)) }
                                    }
                                }
                            }
                        }
                    }
                }
            }
        });
    }

    fn figure(&mut self, chart: &Chart) {
        self.parts.push(html! {
            figure {
                (PreEscaped(chart.svg.trim()))
                figcaption { (visible(&chart.caption)) }
            }
        });
    }

    fn caution(&mut self, text: &str) {
        self.parts.push(html! {
            aside.caution role="note" {
                strong { "Caution" }
                (visible(text))
            }
        });
    }

    fn footer(&mut self, text: &str) {
        self.parts.push(html! { footer { (visible(text)) } });
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn header_groups_span_their_columns() {
        let h: Vec<String> = ["team", "the gap\nwins", "\nz", "evidence\nruns", "\nrecord"]
            .iter()
            .map(|s| s.to_string())
            .collect();
        assert_eq!(
            column_groups(&h),
            vec![
                (String::new(), 1),
                ("the gap".to_string(), 2),
                ("evidence".to_string(), 2)
            ]
        );
        assert_eq!(column_label("the gap\nwins"), "wins");
        assert_eq!(column_label("team"), "team");
    }
}

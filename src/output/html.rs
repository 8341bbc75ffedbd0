//! Small pieces of HTML: escaping and tables. Every string that may come from an input file
//! passes through [`esc`] (or [`Html::text`]) before it reaches the page.

/// Escapes text for HTML content and attribute values.
pub fn esc(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c => out.push(c),
        }
    }
    out
}

/// A table cell: escaped text, with a class for marked figures.
#[derive(Debug, Clone, Default)]
pub struct Td {
    pub text: String,
    pub class: Option<&'static str>,
}

impl Td {
    pub fn flagged(text: impl Into<String>, flagged: bool) -> Self {
        Self {
            text: text.into(),
            class: flagged.then_some("bad"),
        }
    }
}

impl From<super::table::Cell> for Td {
    fn from(c: super::table::Cell) -> Self {
        Td::flagged(c.text, c.flagged)
    }
}

impl From<String> for Td {
    fn from(text: String) -> Self {
        Self { text, class: None }
    }
}

impl From<&str> for Td {
    fn from(text: &str) -> Self {
        Self {
            text: text.to_string(),
            class: None,
        }
    }
}

/// An HTML document being written, with helpers that escape what they are given.
#[derive(Debug, Default)]
pub struct Html {
    pub out: String,
}

impl Html {
    /// Markup written as is: only for text that is the program's own.
    pub fn raw(&mut self, s: &str) -> &mut Self {
        self.out.push_str(s);
        self
    }

    /// Text, escaped.
    pub fn text(&mut self, s: &str) -> &mut Self {
        self.out.push_str(&esc(s));
        self
    }

    /// `<tag>text</tag>` with the text escaped.
    pub fn element(&mut self, tag: &str, class: Option<&str>, text: &str) -> &mut Self {
        match class {
            Some(c) => self.out.push_str(&format!("<{tag} class=\"{c}\">")),
            None => self.out.push_str(&format!("<{tag}>")),
        }
        self.text(text);
        self.out.push_str(&format!("</{tag}>\n"));
        self
    }

    /// A table: headers and rows escaped; the first column is a label, the rest align right
    /// unless `left` lists them.
    pub fn table(&mut self, class: &str, headers: &[&str], rows: &[Vec<Td>]) -> &mut Self {
        self.out.push_str(&format!(
            "<div class=\"scroll\"><table class=\"{class}\">\n<thead><tr>"
        ));
        for h in headers {
            self.out.push_str(&format!("<th>{}</th>", esc(h)));
        }
        self.out.push_str("</tr></thead>\n<tbody>\n");
        for row in rows {
            self.out.push_str("<tr>");
            for cell in row {
                match cell.class {
                    Some(c) => self
                        .out
                        .push_str(&format!("<td class=\"{c}\">{}</td>", esc(&cell.text))),
                    None => self.out.push_str(&format!("<td>{}</td>", esc(&cell.text))),
                }
            }
            self.out.push_str("</tr>\n");
        }
        self.out.push_str("</tbody></table></div>\n");
        self
    }

    /// A list of escaped items.
    pub fn list(&mut self, items: &[String]) -> &mut Self {
        if items.is_empty() {
            return self;
        }
        self.out.push_str("<ul>\n");
        for i in items {
            self.out.push_str(&format!("<li>{}</li>\n", esc(i)));
        }
        self.out.push_str("</ul>\n");
        self
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn markup_in_text_is_escaped() {
        assert_eq!(
            esc("<script>alert('x')</script> & \"y\""),
            "&lt;script&gt;alert(&#39;x&#39;)&lt;/script&gt; &amp; &quot;y&quot;"
        );
    }
}

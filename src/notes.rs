//! A scenario's notes as simple formatted text: headings (`# `, `## `), list items (`- ` or
//! `* `), paragraphs, and inline *emphasis* and **strong** text. Parsed here, without any UI
//! type, so the window and the tests share one reading of the notes.

/// A run of text with its inline style.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Span {
    pub text: String,
    pub emphasis: bool,
    pub strong: bool,
}

/// One block of the notes.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Block {
    /// A heading, level 1 (`# `) or 2 and deeper (`## `…).
    Heading { level: u8, spans: Vec<Span> },
    /// A list item.
    Item(Vec<Span>),
    /// A paragraph: consecutive plain lines joined by spaces.
    Paragraph(Vec<Span>),
}

/// Splits inline text into spans at `**` (strong) and `*` or `_` (emphasis) markers. An
/// unmatched marker is kept as a literal character.
pub fn inline(text: &str) -> Vec<Span> {
    let mut spans: Vec<Span> = Vec::new();
    let (mut emphasis, mut strong) = (false, false);
    let mut cur = String::new();
    let chars: Vec<char> = text.chars().collect();
    let rest_has = |from: usize, pat: &str| -> bool {
        let tail: String = chars[from..].iter().collect();
        tail.contains(pat)
    };
    let mut i = 0;
    while i < chars.len() {
        let c = chars[i];
        let double = c == '*' && chars.get(i + 1) == Some(&'*');
        if double && (strong || rest_has(i + 2, "**")) {
            flush(&mut spans, &mut cur, emphasis, strong);
            strong = !strong;
            i += 2;
            continue;
        }
        if (c == '*' || c == '_') && !double && (emphasis || rest_has(i + 1, &c.to_string())) {
            // An underscore inside a word (as in a file name) is not a marker.
            let inside_word = c == '_'
                && i > 0
                && chars[i - 1].is_alphanumeric()
                && chars.get(i + 1).is_some_and(|n| n.is_alphanumeric());
            if !inside_word {
                flush(&mut spans, &mut cur, emphasis, strong);
                emphasis = !emphasis;
                i += 1;
                continue;
            }
        }
        cur.push(c);
        i += 1;
    }
    flush(&mut spans, &mut cur, emphasis, strong);
    spans
}

fn flush(spans: &mut Vec<Span>, cur: &mut String, emphasis: bool, strong: bool) {
    if !cur.is_empty() {
        spans.push(Span {
            text: std::mem::take(cur),
            emphasis,
            strong,
        });
    }
}

/// Parses notes text into blocks.
pub fn parse(notes: &str) -> Vec<Block> {
    let mut blocks = Vec::new();
    let mut para = String::new();
    let end_para = |para: &mut String, blocks: &mut Vec<Block>| {
        if !para.trim().is_empty() {
            blocks.push(Block::Paragraph(inline(para.trim())));
        }
        para.clear();
    };
    for line in notes.lines() {
        let t = line.trim();
        if t.is_empty() {
            end_para(&mut para, &mut blocks);
        } else if let Some(h) = t.strip_prefix('#') {
            end_para(&mut para, &mut blocks);
            let extra = h.chars().take_while(|&c| c == '#').count();
            let title = h[extra..].trim();
            blocks.push(Block::Heading {
                level: (1 + extra).min(3) as u8,
                spans: inline(title),
            });
        } else if let Some(item) = t.strip_prefix("- ").or_else(|| t.strip_prefix("* ")) {
            end_para(&mut para, &mut blocks);
            blocks.push(Block::Item(inline(item.trim())));
        } else {
            if !para.is_empty() {
                para.push(' ');
            }
            para.push_str(t);
        }
    }
    end_para(&mut para, &mut blocks);
    blocks
}

#[cfg(test)]
mod tests {
    use super::*;

    fn plain(s: &str) -> Span {
        Span {
            text: s.into(),
            emphasis: false,
            strong: false,
        }
    }

    #[test]
    fn headings_items_and_paragraphs() {
        let b = parse(
            "# What it shows\nA cell at rest\nin a normal bath.\n\n- raise the bath\n* watch V\n## Next\n",
        );
        assert_eq!(b.len(), 5);
        assert_eq!(
            b[0],
            Block::Heading {
                level: 1,
                spans: vec![plain("What it shows")]
            }
        );
        assert_eq!(
            b[1],
            Block::Paragraph(vec![plain("A cell at rest in a normal bath.")])
        );
        assert_eq!(b[2], Block::Item(vec![plain("raise the bath")]));
        assert_eq!(b[3], Block::Item(vec![plain("watch V")]));
        assert_eq!(
            b[4],
            Block::Heading {
                level: 2,
                spans: vec![plain("Next")]
            }
        );
    }

    #[test]
    fn emphasis_and_strong() {
        let s = inline("watch *the trace* and **the lines**");
        assert_eq!(s.len(), 4);
        assert!(s[1].emphasis && !s[1].strong && s[1].text == "the trace");
        assert!(s[3].strong && !s[3].emphasis && s[3].text == "the lines");
    }

    #[test]
    fn unmatched_markers_and_snake_case_stay_literal() {
        assert_eq!(inline("2 * 3"), vec![plain("2 * 3")]);
        assert_eq!(
            inline("set outside_mm higher"),
            vec![plain("set outside_mm higher")]
        );
    }
}

//! Finds the path of the JSON value at a line/column, so parse errors can name the field.

enum Frame {
    Object { key: Option<String> },
    Array { index: usize },
}

/// The path (`launches[2].speed_m_s`) of the value being read at `line`/`column` (1-based, as
/// reported by serde_json) in `text`. With `container_only` the innermost key or index is
/// dropped (for errors reported at the end of an object or array). Empty for the root.
pub(crate) fn json_path_at(text: &str, line: usize, column: usize, container_only: bool) -> String {
    let mut stack: Vec<Frame> = Vec::new();
    let mut in_string = false;
    let mut string_is_key = false;
    let mut escaped = false;
    let mut buf = String::new();
    let mut expecting_key = false;
    let (mut cur_line, mut cur_col) = (1usize, 0usize);
    for ch in text.chars() {
        // Stop before the last character serde consumed.
        if cur_line > line || (cur_line == line && cur_col + 1 >= column) {
            break;
        }
        if ch == '\n' {
            cur_line += 1;
            cur_col = 0;
        } else {
            cur_col += 1;
        }
        if in_string {
            if escaped {
                escaped = false;
                buf.push(ch);
            } else if ch == '\\' {
                escaped = true;
            } else if ch == '"' {
                in_string = false;
                if string_is_key && let Some(Frame::Object { key }) = stack.last_mut() {
                    *key = Some(std::mem::take(&mut buf));
                }
            } else {
                buf.push(ch);
            }
            continue;
        }
        match ch {
            '{' => {
                stack.push(Frame::Object { key: None });
                expecting_key = true;
            }
            '[' => {
                stack.push(Frame::Array { index: 0 });
                expecting_key = false;
            }
            '}' | ']' => {
                stack.pop();
                expecting_key = false;
            }
            '"' => {
                in_string = true;
                string_is_key = expecting_key && matches!(stack.last(), Some(Frame::Object { .. }));
                buf.clear();
            }
            ':' => expecting_key = false,
            ',' => match stack.last_mut() {
                Some(Frame::Array { index }) => *index += 1,
                Some(Frame::Object { .. }) => expecting_key = true,
                None => {}
            },
            _ => {}
        }
    }
    if in_string
        && string_is_key
        && let Some(Frame::Object { key }) = stack.last_mut()
    {
        *key = Some(buf);
    }
    if container_only {
        match stack.last_mut() {
            Some(Frame::Object { key }) => *key = None,
            Some(Frame::Array { .. }) => {
                stack.pop();
            }
            None => {}
        }
    }
    let mut path = String::new();
    for f in &stack {
        match f {
            Frame::Object { key: Some(k) } => {
                if !path.is_empty() {
                    path.push('.');
                }
                path.push_str(k);
            }
            Frame::Object { key: None } => {}
            Frame::Array { index } => path.push_str(&format!("[{index}]")),
        }
    }
    path
}

#[cfg(test)]
mod tests {
    use super::json_path_at;

    #[test]
    #[allow(clippy::unwrap_used, reason = "test")]
    fn paths_of_positions() {
        let text = "{\"a\": {\"b\": [1, \"x\", 3]},\n \"c\": 2}";
        // Column of the closing quote of "x" on line 1.
        let col = text.find("\"x\"").unwrap() + 3;
        assert_eq!(json_path_at(text, 1, col, false), "a.b[1]");
        assert_eq!(json_path_at(text, 2, 7, false), "c");
        assert_eq!(json_path_at(text, 1, 1, false), "");
    }
}

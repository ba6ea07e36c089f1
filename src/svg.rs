//! Small helpers shared by the hand-written SVG figures.

/// Text escaped for XML content and attribute values.
pub fn xml_text(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

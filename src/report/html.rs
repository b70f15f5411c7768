//! Self-contained HTML report (placeholder, being written).

pub fn page(title: &str, body: &str, _plots: &[(String, String)]) -> String {
    format!("<!DOCTYPE html><html><head><meta charset=\"utf-8\"><title>{title}</title></head><body><pre>{}</pre></body></html>\n", body.replace('&', "&amp;").replace('<', "&lt;"))
}

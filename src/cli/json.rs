//! `--json` on `check`, `score`, `plan` and `tally`: one JSON object on standard output per
//! run, for pipelines. Every object holds `ok` (bool) and `exit_code` (the process exit code);
//! a failed run prints `{"ok": false, "exit_code": N, "error": "..."}` (plus the command's own
//! fields where it has them, e.g. `check`'s problems). The fields are listed in README
//! (*Output for pipelines*).

use serde_json::{Value, json};

use super::CliError;
use countersteer::campaign::{Location, Problem, Severity};

/// Prints `v` as one line on standard output.
pub fn print(v: &Value) {
    say!("{v}");
}

/// The object printed for a failed run.
pub fn failure(e: &CliError) -> Value {
    json!({ "ok": false, "exit_code": e.code, "error": e.message })
}

/// Adds `"ok": true, "exit_code": 0` to a command's object and prints it.
pub fn print_ok(mut v: Value) {
    if let Value::Object(m) = &mut v {
        m.insert("ok".into(), Value::Bool(true));
        m.insert("exit_code".into(), json!(0));
    }
    print(&v);
}

/// One located problem: severity, kind, file, line or record, field and message.
pub fn problem(p: &Problem) -> Value {
    let (line, record) = match p.location {
        Location::File => (None, None),
        Location::Line(n) => (Some(n), None),
        Location::Record(n) => (None, Some(n)),
    };
    json!({
        "severity": match p.severity { Severity::Error => "error", Severity::Warning => "warning" },
        "kind": format!("{:?}", p.kind),
        "file": p.file.display().to_string(),
        "line": line,
        "record": record,
        "field": p.field,
        "message": p.message,
    })
}

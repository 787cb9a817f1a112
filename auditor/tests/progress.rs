//! The progress bar reads a growing trace: partial lines wait for their end, the planned steps come from the
//! header, the steps done from the latest step record, and rate and time left are plain arithmetic on them
//! (common practice, no source).

use std::time::Duration;
use twinstep_cli::progress::Progress;

const HEADER: &str = r#"{"record":"header","format":"twinstep-trace","version":1,"steps_planned":5000}"#;

#[test]
fn partial_lines_wait_and_steps_count() {
    let mut progress = Progress::default();
    let text = format!("{HEADER}\n{{\"record\":\"step\",\"step\":1000,\"lens\":\"shadow\",\"fields\":[]}}\n");
    let (first, rest) = text.split_at(text.len() - 20);
    progress.feed(first.as_bytes());
    assert_eq!((progress.planned, progress.done), (Some(5000), 0), "the cut step line is not counted yet");
    progress.feed(rest.as_bytes());
    assert_eq!(progress.done, 1000);
    // Counted from a first look at step 600: 400 steps in 2 s, 200 steps/s, 20 s left.
    assert!(progress.line(Duration::from_secs(2), 600).ends_with("200 steps/s  20 s left"));
    // 1000 steps in 2 s: 500 steps/s, (5000 − 1000) / 500 = 8 s left, 1000/5000 of 28 characters = 6 filled.
    assert_eq!(
        progress.line(Duration::from_secs(2), 0),
        format!("[{}{}] 1000/5000 steps  500 steps/s  8 s left", "#".repeat(6), "-".repeat(22))
    );
}

#[test]
fn audited_steps_win_over_the_horizon_and_garbage_is_ignored() {
    let mut progress = Progress::default();
    let header = HEADER.replace("\"steps_planned\":5000", "\"steps_planned\":100000,\"steps_audited\":2000");
    progress.feed(format!("{header}\nnot json\n{{\"record\":\"summary\",\"steps_done\":2000}}\n").as_bytes());
    assert_eq!((progress.planned, progress.done), (Some(2000), 2000));
    let mut unknown = Progress::default();
    unknown.feed(b"{\"record\":\"step\",\"step\":7}\n");
    assert_eq!(unknown.line(Duration::ZERO, 0), "7 steps  0 steps/s", "no header: no bar, no time left");
}

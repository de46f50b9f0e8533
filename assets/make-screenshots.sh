#!/bin/sh
# Renews the README's screenshots (assets/workbench.png, desk.png, review-list.png,
# export.png) from the demo campaign, in an X virtual framebuffer at 1280x800.
#
# Needs: a release build (cargo build --release --locked), and the Debian packages xvfb,
# imagemagick (for `import`), xdotool, libgl1, libglx-mesa0, libgl1-mesa-dri.
# Run from the repository root:   sh assets/make-screenshots.sh
#
# The demo campaign is copied to a temporary folder (the window writes a ledger and scores
# there, never into demo-data/), and the window's remembered state lives in that folder too,
# so every run starts alike.
set -eu
if [ -z "${DISPLAY:-}" ]; then
    exec xvfb-run -a -s "-screen 0 1280x800x24" sh "$0" "$@"
fi
BIN=${BIN:-$PWD/target/release/countersteer}
OUT=$PWD/assets
WORK=$(mktemp -d)
trap 'rm -rf "$WORK"' EXIT
cp -r demo-data "$WORK/demo"
export HOME="$WORK" XDG_DATA_HOME="$WORK/data" XDG_CONFIG_HOME="$WORK/config"
unset WAYLAND_DISPLAY

# start ARGS...: opens the window and waits until it is drawn and the round is scored.
start() {
    "$BIN" open "$WORK/demo" --annotator ana "$@" >"$WORK/log" 2>&1 &
    PID=$!
    sleep 12
    WID=$(xdotool search --name '^countersteer$' | head -n 1)
    xdotool windowfocus "$WID"
}
stop() {
    kill "$PID"
    wait "$PID" 2>/dev/null || true
}
keys() {
    for k in "$@"; do
        xdotool key --clearmodifiers "$k"
        sleep 0.6
    done
}
shot() {
    sleep 1
    /usr/bin/import -window root "$OUT/$1"
}
# The desk's safety caution is shown once per annotator and day: the first shot shows it.

# The desk on the review list's third entry (r2-007 t = 253, which has camera frames), with
# the safety caution of the annotator's first sitting of the day.
start --review
xdotool mousemove 100 263 click 1
shot desk.png
# The caution put away (button position in a 1280x800 window), then two entries judged: a
# skip and the suggestion saved (Shift Enter); the review list with the desk; the export.
xdotool mousemove 1030 375 click 1
sleep 1
keys s shift+Return
sleep 3
shot review-list.png
keys ctrl+e
shot export.png
# The window saves what it remembers (the caution put away) every 30 s.
sleep 30
stop

# The workbench: round 2's most novel episode (top of the shelf), the playhead on its first
# excursion onset.
start
keys F2 Prior Prior Prior Prior Prior Prior Prior Prior Prior Prior Prior Prior Prior Prior \
    Prior Prior Prior Prior Prior Prior Home x
shot workbench.png
stop

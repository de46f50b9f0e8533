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

# The desk on the review list's first open entry (caution shown), then the review list with
# the desk after two entries are judged (a skip and the suggestion saved), then export.
start --review
shot desk.png
xdotool mousemove "${PUT_AWAY_X:-1090}" "${PUT_AWAY_Y:-330}" click 1
sleep 1
keys s shift+Return
shot review-list.png
keys ctrl+e
shot export.png
stop

# The workbench: round 2's episodes, the playhead on an excursion onset.
start
keys Next Next x
shot workbench.png
stop

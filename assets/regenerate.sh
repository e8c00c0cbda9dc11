#!/bin/sh
# Regenerates the README's screenshots from the real window on software GL, each one the
# window alone at its own size (no black bars from a larger virtual screen).
# Needs: xvfb, imagemagick, xdotool, libgl1-mesa-dri; a built binary (BIN, default debug).
set -eu
cd "$(dirname "$0")/.."
BIN=${BIN:-target/debug/plumbline}
work=$(mktemp -d)
"$BIN" demo --out "$work/demo.plumb" >/dev/null 2>&1
if [ -z "${DISPLAY:-}" ]; then
    Xvfb :97 -screen 0 1600x1000x24 >/dev/null 2>&1 &
    xvfb=$!
    export DISPLAY=:97
    sleep 1
fi
export HOME="$work/home" LIBGL_ALWAYS_SOFTWARE=1
mkdir -p "$HOME/.config/plumbline"
# Every screen but the desk is the lead's (signed out); the desk opens signed in as a
# demo reviewer who still has pairs to grade.
for screen in home catalog scales desk agreement scoreboard trial; do
    signed_in=""
    [ "$screen" = desk ] && signed_in="--reviewer ${REVIEWER:-rev-cedar}"
    # shellcheck disable=SC2086
    "$BIN" open "$work/demo.plumb" --screen "$screen" $signed_in >/dev/null 2>&1 &
    pid=$!
    sleep "${WAIT:-12}"
    id=$(xdotool search --onlyvisible --name "Plumbline" | head -n 1)
    import -window "$id" "assets/screen-$screen.png"
    kill "$pid"
    wait "$pid" 2>/dev/null || true
done
[ -n "${xvfb:-}" ] && kill "$xvfb"
rm -rf "$work"

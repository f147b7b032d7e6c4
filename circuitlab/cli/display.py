"""Is there a screen to open the editor on? Asked before Qt is imported.

Without one, Qt's platform plugin aborts the process (exit 134) with a note
about missing xcb libraries, even where they are installed. This check
turns that into a plain message with what to do instead.
"""

import os
import re
import socket
import sys

NO_DISPLAY_HINT = ("Run it where there is a desktop session, or render the window to a picture "
                   "with --screenshot OUT.png, which needs no display; the commands listed by "
                   "'circuitlab --help' need none either.")


def display_problem(environ=None, platform: str | None = None) -> str | None:
    """Why the editor cannot open a window here, or None if it (probably) can."""
    env = os.environ if environ is None else environ
    platform = sys.platform if platform is None else platform
    if platform in ("win32", "darwin") or env.get("QT_QPA_PLATFORM") or env.get("WAYLAND_DISPLAY"):
        return None
    display = env.get("DISPLAY", "")
    if not display:
        return "there is no display to open the editor on (DISPLAY is not set)"
    local = re.fullmatch(r"(?:unix)?:(\d+)(?:\.\d+)?", display)
    if local and not _x_socket_answers(local.group(1)):
        return f"there is no display to open the editor on (nothing answers on DISPLAY={display})"
    return None


def _x_socket_answers(number: str) -> bool:
    """Does a local X server listen on display ``number`` (its socket file or abstract socket)?"""
    for address in (f"/tmp/.X11-unix/X{number}", f"\0/tmp/.X11-unix/X{number}"):
        with socket.socket(socket.AF_UNIX, socket.SOCK_STREAM) as s:
            s.settimeout(1.0)
            try:
                s.connect(address)
                return True
            except OSError:
                continue
    return False

"""Run one G-code file through Debian's linuxcnc RS274/NGC interpreter and print JSON.

Runs under Debian's ``/usr/bin/python3`` (the interpreter module is built for it), not the
project's virtualenv, and imports nothing from wirecut. Usage::

    LD_LIBRARY_PATH=CACHE/usr/lib:CACHE/usr/lib/x86_64-linux-gnu \\
        /usr/bin/python3 linuxcnc_driver.py CACHE PROGRAM.ngc

The canon object receives the interpreter's canonical machining calls (the callback names
are those the ``gcode`` extension module calls; see rs274/interpret.py and rs274/glcanon.py
in the package). Positions arrive in the interpreter's internal length unit, inches, and are
printed in mm. Output, one JSON object on stdout::

    {"result": int, "min_error": int, "error": str, "error_line": int,
     "moves": [{"kind": "traverse"|"feed", "line": n, "xyzabcuvw_mm": [9 floats],
                "feed_rate": f}, ...],
     "dwells": [{"line": n, "seconds": s}], "feed_rates": [...], "comments": [...],
     "spindle": [...], "unexpected": [...]}
"""

import json
import os
import sys
import tempfile

__all__ = ["Canon", "main"]

INCH_MM = 25.4  # 1 in = 25.4 mm exactly (international yard and pound agreement, 1959)

# Axis mask bits of the interpreter: X=1 Y=2 Z=4 A=8 B=16 C=32 U=64 V=128 W=256.
AXIS_BITS = {"X": 1, "Y": 2, "Z": 4, "A": 8, "B": 16, "C": 32, "U": 64, "V": 128, "W": 256}


class Canon:
    """Records the canonical calls of one parse."""

    def __init__(self, parameter_file, axes="XYUV"):
        self.parameter_file = parameter_file
        self.axis_mask = sum(AXIS_BITS[a] for a in axes)
        self.moves = []
        self.dwells = []
        self.feed_rates = []
        self.comments = []
        self.spindle = []
        self.unexpected = []
        self.lineno = 0
        self.feed_rate = 0.0
        self.state = None

    # --- queries the interpreter makes
    def get_axis_mask(self):
        return self.axis_mask

    def get_tool(self, pocket):
        return -1, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0

    def get_external_angular_units(self):
        return 1.0

    def get_external_length_units(self):
        return 1.0  # the machine's own unit is mm: 1 machine unit per mm

    def get_block_delete(self):
        return False

    def check_abort(self):
        return False

    # --- state reports
    def next_line(self, state):
        self.state = state
        self.lineno = state.sequence_number

    def set_feed_rate(self, rate):
        self.feed_rate = rate
        self.feed_rates.append({"line": self.lineno, "rate": rate})

    def comment(self, text):
        self.comments.append(text)

    def message(self, text):
        self.comments.append("MSG," + text)

    def set_spindle_rate(self, *args):
        self.spindle.append({"line": self.lineno, "call": "rate", "args": list(args)})

    def spindle_on(self, *args):
        self.spindle.append({"line": self.lineno, "call": "on", "args": list(args)})

    def spindle_off(self, *args):
        self.spindle.append({"line": self.lineno, "call": "off", "args": list(args)})

    def _move(self, kind, pos):
        self.moves.append(
            {
                "kind": kind,
                "line": self.lineno,
                "xyzabcuvw_mm": [
                    p * INCH_MM if i not in (3, 4, 5) else p for i, p in enumerate(pos)
                ],
                "feed_rate": self.feed_rate,
            }
        )

    def straight_traverse(self, *pos):
        self._move("traverse", pos)

    def straight_feed(self, *pos):
        self._move("feed", pos)

    def straight_probe(self, *pos):
        self.unexpected.append("straight_probe")
        self._move("probe", pos)

    def arc_feed(self, *args):
        self.unexpected.append("arc_feed")

    def rigid_tap(self, *args):
        self.unexpected.append("rigid_tap")

    def dwell(self, seconds):
        self.dwells.append({"line": self.lineno, "seconds": seconds})

    # --- calls with nothing to record for a hot-wire program
    def set_plane(self, plane):
        pass

    def select_plane(self, plane):
        pass

    def set_traverse_rate(self, rate):
        pass

    def set_g5x_offset(self, *args):
        pass

    def set_g92_offset(self, *args):
        pass

    def set_xy_rotation(self, *args):
        pass

    def tool_offset(self, *args):
        pass

    def change_tool(self, pocket):
        self.unexpected.append("change_tool")

    def user_defined_function(self, *args):
        self.unexpected.append("user_defined_function")

    def __getattr__(self, name):
        # Any other canon call: accept it and record its name, so a new interpreter version
        # does not abort the parse on a callback this driver does not know.
        if name.startswith("__"):
            raise AttributeError(name)

        def record(*args, _name=name):
            self.unexpected.append(_name)

        return record


def main(argv):
    cache, program = argv[1], argv[2]
    axes = argv[3] if len(argv) > 3 else "XYUV"
    sys.path.insert(0, os.path.join(cache, "usr", "lib", "python3", "dist-packages"))
    import gcode  # noqa: E402  (Debian's linuxcnc interpreter module)

    with tempfile.TemporaryDirectory() as tmp:
        params = os.path.join(tmp, "empty.var")
        open(params, "w").close()
        canon = Canon(params, axes)
        result, last = gcode.parse(program, canon, "G21", "")
        error = ""
        if result > gcode.MIN_ERROR:
            try:
                error = gcode.strerror(result)
            except Exception as exc:  # the message lookup itself is best effort
                error = f"strerror failed: {exc}"
    out = {
        "result": result,
        "min_error": gcode.MIN_ERROR,
        "error": error,
        "error_line": last,
        "moves": canon.moves,
        "dwells": canon.dwells,
        "feed_rates": canon.feed_rates,
        "comments": canon.comments,
        "spindle": canon.spindle,
        "unexpected": sorted(set(canon.unexpected)),
    }
    json.dump(out, sys.stdout)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))

"""Bounds before work: too many rows, too long a line, and anything but a regular file are refused in one line.

The timings of these refusals are measured in benchmarks/bench_reader.py (ratios against reading a normal
file); here only the refusals and their reasons are checked.
"""

import os
import socket
import threading

import pytest

from tauspec import ReadOptions, parse_sweep_text, read_sweep
from tauspec.errors import SettingsError, SweepError

HEADER = "omega [rad/s],G' [Pa],G'' [Pa]\n"
ROWS = "".join(f"{w},{10 * w},{20 * w}\n" for w in (0.1, 0.3, 1, 3, 10, 30, 100))


def test_a_million_rows_refused_from_one_count(tmp_path):
    path = tmp_path / "long.csv"
    with open(path, "w") as fh:
        fh.write(HEADER)
        fh.write("1.5,2.5,3.5\n" * 1_000_000)
    assert path.stat().st_size < 32 * 2**20
    with pytest.raises(SweepError, match=r"long.csv: has 1,000,002 lines; tauspec reads at most 100,000 data rows"):
        read_sweep(path)


def test_rows_just_over_the_bound_refused_at_the_row(tmp_path):
    text = HEADER + "".join(f"{1 + i * 1e-3!r},1,1\n" for i in range(21))
    with pytest.raises(SweepError, match=r"x.csv:22: more than 20 data rows"):
        parse_sweep_text(text, source="x.csv", max_rows=20)
    assert len(parse_sweep_text(text, source="x.csv", max_rows=21)) == 21


@pytest.mark.parametrize("line", ["[ " * 16_000, "omega," + "[ " * 16_000 + ",G',G''",
                                  "# note: " + "x" * 65_536, "Comment: " + " " * 65_536 + "x"])
def test_long_lines_refused_before_parsing(line):
    with pytest.raises(SweepError, match=r"x.csv:1: line is [\d,]+ characters long; tauspec reads lines of at most "
                                         r"4,096"):
        parse_sweep_text(line + "\n" + HEADER + ROWS, source="x.csv")


def test_a_line_at_the_bound_is_read():
    meta = "# note: " + "x" * (4096 - 8) + "\n"
    assert len(meta) == 4097
    s = parse_sweep_text(meta + HEADER + ROWS, source="x.csv")
    assert len(s.meta["note"]) == 4088


def test_fifo_refused_without_opening(tmp_path):
    path = tmp_path / "pipe.csv"
    os.mkfifo(path)
    # Reading a FIFO with no writer would wait for ever; a timer opens it for writing only if the reader hangs.
    unblock = threading.Timer(5.0, lambda: open(path, "w").close())
    unblock.start()
    try:
        with pytest.raises(SweepError, match=r"pipe.csv: is a FIFO \(named pipe\), not a regular file"):
            read_sweep(path)
    finally:
        unblock.cancel()


def test_devices_and_sockets_refused():
    with pytest.raises(SweepError, match=r"/dev/zero: is a character device, not a regular file"):
        read_sweep("/dev/zero")


def test_socket_refused(tmp_path):
    path = tmp_path / "s.sock"
    sock = socket.socket(socket.AF_UNIX, socket.SOCK_STREAM)
    try:
        sock.bind(str(path))
        with pytest.raises(SweepError, match=r"s.sock: is a socket, not a regular file"):
            read_sweep(path)
    finally:
        sock.close()


@pytest.mark.parametrize("bad", [{"temperature_tolerance": 0}, {"temperature_tolerance": float("nan")},
                                 {"max_rows": 0}, {"max_line_chars": 1.5}, {"max_bytes": True}])
def test_options_validated_once(bad):
    with pytest.raises(SettingsError):
        ReadOptions(**bad)


def test_unknown_option_is_a_settings_error():
    with pytest.raises(SettingsError, match="the reader has no option 'tolerance'"):
        parse_sweep_text(HEADER + ROWS, tolerance=2)


def test_text_without_a_table_stops_the_scan():
    text = "".join(f"Setting {i} is on\n" for i in range(600)) + HEADER + ROWS
    with pytest.raises(SweepError, match=r"x.csv:1: no header row in the first 500 lines of text \(the first of them: "
                                         r"header names no frequency column"):
        parse_sweep_text(text, source="x.csv")
    after = HEADER + ROWS + "".join(f"note {i}\n" for i in range(501))
    with pytest.raises(SweepError, match=r"more than 500 lines of text after line 9 without a table"):
        parse_sweep_text(after, source="x.csv")
    assert len(parse_sweep_text("".join(f"Setting {i}: on\n" for i in range(400)) + HEADER + ROWS)) == 7

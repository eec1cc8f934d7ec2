"""Progress bars: drawn only on a terminal and when not quiet."""

import io
import os
import pty

from tractive.progress import NoProgress, progress, shows_progress


def test_no_bar_on_a_pipe_or_file():
    # io.StringIO.isatty() is False, like a pipe or a redirected file (io module docs)
    out = io.StringIO()
    with progress(10, "draws", stream=out) as bar:
        assert isinstance(bar, NoProgress)
        bar.update(3)
    assert out.getvalue() == ""


def test_quiet_wins_over_a_terminal():
    leader, follower = pty.openpty()
    try:
        with os.fdopen(follower, "w", closefd=False) as tty:
            assert tty.isatty()                 # a pseudo-terminal is a terminal (os.isatty)
            assert shows_progress(tty) is True
            assert shows_progress(tty, quiet=True) is False
            assert isinstance(progress(5, stream=tty, quiet=True), NoProgress)
    finally:
        os.close(leader)
        os.close(follower)


def test_bar_on_a_terminal_counts_the_steps():
    leader, follower = pty.openpty()
    try:
        with os.fdopen(follower, "w", closefd=False) as tty:
            with progress(4, "draws", stream=tty) as bar:
                assert not isinstance(bar, NoProgress)
                bar.update(3)
                bar.update(1)
                assert bar.n == 4                # tqdm keeps the count in .n
                assert bar.total == 4 and bar.desc == "draws"
    finally:
        os.close(leader)
        os.close(follower)


def test_closed_or_odd_streams_count_as_no_terminal():
    closed = io.StringIO()
    closed.close()                              # isatty() on a closed file raises ValueError
    assert shows_progress(closed) is False
    assert shows_progress(object()) is False    # no isatty at all

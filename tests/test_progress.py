"""The stderr progress bar (stakeout/progress.py): shown only at a terminal and only for large jobs."""


def test_progress_only_at_a_terminal():
    import io

    from stakeout.progress import Progress

    class Tty(io.StringIO):
        def isatty(self):
            return True

    quiet = io.StringIO()
    p = Progress(2, 100_000, stream=quiet)
    p.step("a")
    p.step("b")
    assert quiet.getvalue() == ""
    small = Tty()
    Progress(2, 10, stream=small).step("a")
    assert small.getvalue() == ""
    loud = Tty()
    p = Progress(2, 100_000, stream=loud)
    p.step("a")
    p.step("b")
    assert "2/2" in loud.getvalue() and loud.getvalue().endswith("\n")

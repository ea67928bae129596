"""The dashboard's server process loads the analysis stack before it answers."""

import subprocess
import sys

from trimlog.dashboard import serve


def test_streamlit_runs_the_router_with_the_options_given():
    argv = serve.streamlit_argv(["--server.port", "8601"])
    assert argv[:3] == ["streamlit", "run", str(serve.APP)]
    assert argv[3:] == ["--server.port", "8601"]
    assert serve.APP.is_file()


def test_warm_loads_the_stack_but_no_module_that_defines_streamlit_caches():
    # Streamlit's caches belong to the server's runtime: a module defining them imported
    # before the runtime exists would get caches of its own (and a warning per cache).
    code = (
        "import sys; from trimlog.dashboard import serve; serve.warm(); "
        "print(sorted(m for m in ('trimlog.dashboard.compute', 'trimlog.dashboard.results', "
        "'matplotlib.figure', 'pandas', 'trimlog.pipeline.chain', 'trimlog.history.service') "
        "if m in sys.modules))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True)
    assert out.stdout.split() == ["['matplotlib.figure',", "'pandas',",
                                  "'trimlog.history.service',", "'trimlog.pipeline.chain']"]
    assert "No runtime found" not in out.stderr


def test_the_dashboard_command_starts_the_serve_module(monkeypatch):
    from trimlog import cli

    started = {}

    class Child:
        def __init__(self, command):
            started["command"] = command

    monkeypatch.setattr(subprocess, "Popen", Child)
    monkeypatch.setattr(cli, "_run_child", lambda child: 0)
    assert cli.main(["dashboard", "--port", "8602"]) == 0
    command = started["command"]
    assert command[:3] == [sys.executable, "-m", "trimlog.dashboard.serve"]
    assert command[command.index("--server.port") + 1] == "8602"


def test_the_warm_up_computes_what_a_new_visitors_results_page_asks_for():
    # The server's warm-up is worth something only if its inputs are the page's own: the
    # Results page of a new session (the demo flights) must find its analysis computed.
    from streamlit.testing.v1 import AppTest

    from trimlog.dashboard import compute, session

    compute._analysed.clear()
    at = AppTest.from_file(str(serve.APP), default_timeout=120).run()
    assert not at.exception, at.exception
    assert [m.label for m in at.metric][:1] == ["Stick-fixed neutral point"]
    assert compute._analysed == {session.first_inputs().key}


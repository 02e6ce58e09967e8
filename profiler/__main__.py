from profiler.cli import run

run()

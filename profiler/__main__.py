from profiler.cli import main

main()

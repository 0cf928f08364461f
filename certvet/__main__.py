"""`python -m certvet`: the same command as `certvet`."""

from certvet.cli import main

main()

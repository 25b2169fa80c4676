"""Exit codes of the derate command, as named constants (documented in README and --help)."""

PASS = 0  # no finding at or above the fail level
FINDINGS = 1  # findings at or above the fail level
USAGE = 2  # usage or input error (bad netlist, data file, option)
SIMULATION = 3  # a scenario failed to simulate (error, timeout, crash)
INTERNAL = 4  # derate could not finish: its reports could not be written (none was changed), or a bug
OUTPUT = INTERNAL
INTERRUPTED = 130  # Ctrl-C or SIGTERM: temporary files removed, workers stopped

EPILOG = """exit codes:
  0  pass: no finding at or above the fail level
  1  findings at or above the fail level (--fail-on; error by default)
  2  usage or input error (bad netlist, data file or option)
  3  simulation failure (ngspice error, timeout or crash in a scenario)
  4  derate could not finish: the reports could not be written (none was changed; the message gives
     the verdict), or an internal error (please report it; DERATE_DEBUG=1 shows the traceback)
130  interrupted (Ctrl-C or SIGTERM)"""

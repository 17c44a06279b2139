"""A tiny tally for the end-to-end scripts: check(condition, what) and the
closing "N passed, N failed" line that CI reads."""
import sys


class Checks:
    def __init__(self):
        self.passed = 0
        self.failures = []

    def __call__(self, cond, what):
        if cond:
            self.passed += 1
        else:
            self.failures.append(what)
            print("FAILED:", what)

    def finish(self):
        print(f"{self.passed} passed, {len(self.failures)} failed")
        sys.exit(1 if self.failures else 0)

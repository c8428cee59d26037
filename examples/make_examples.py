"""Regenerate the invented example data and recipes in this folder from fixed seeds.

    python examples/make_examples.py

Every file is invented (no real people, places or programs); see
narrator/demo.py for the scenarios and the seeds. tests/test_demo.py checks
that the files here are exactly what this script writes.
"""

from pathlib import Path

from narrator.demo import write_examples

if __name__ == "__main__":
    for path in write_examples(Path(__file__).resolve().parent):
        print(f"wrote {path.name}")

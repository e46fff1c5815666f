"""Build the committed demo workbooks in this folder, already refreshed.

Run from the repository root: python workbooks/build_demo.py
"""

from pathlib import Path

from degreewise.commands.demo import write_demo

if __name__ == "__main__":
    for path in write_demo(Path(__file__).resolve().parent):
        print(path)

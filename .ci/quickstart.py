"""Print the N-th command of README.md's Quick start block, or check the block's shape."""

import re
import sys
from pathlib import Path


def commands() -> list[str]:
    text = Path(__file__).resolve().parent.parent.joinpath("README.md").read_text(encoding="utf-8")
    m = re.search(r"^#+ *Quick start *\n(.*?)(?=^#+ )", text + "\n# end", re.M | re.S | re.I)
    if not m:
        sys.exit("README.md has no 'Quick start' section")
    blocks = re.findall(r"^```[a-z]*\n(.*?)^```", m.group(1), re.M | re.S)
    if len(blocks) != 1:
        sys.exit(f"Quick start must hold exactly one fenced block, found {len(blocks)}")
    return [line.strip() for line in blocks[0].splitlines() if line.strip()]


if __name__ == "__main__":
    cmds = commands()
    if len(cmds) != 2:
        sys.exit(f"Quick start must hold exactly two commands, found {len(cmds)}")
    if sys.argv[1:] == ["--check"]:
        if "heatlog demo" not in cmds[0]:
            sys.exit("the first Quick start command must run 'heatlog demo'")
        print("Quick start block: 2 commands")
    else:
        print(cmds[int(sys.argv[1]) - 1])

"""Deterministic mutations of a graph file for the malformed-input test: deleted, inserted and
replaced characters, truncations, swapped and duplicated lines, YAML punctuation in odd places,
binary noise. Prints nothing; writes mutants into a folder."""
import random
import sys

PUNCT = list("{}[]:,-\"'&*!|>%@`#? \t\n") + ["\x00", "\xff", "1e999", "nan", "-1", "99999999999999999999"]


def mutate(text, rng):
    kind = rng.randrange(8)
    if not text:
        return text
    i = rng.randrange(len(text))
    if kind == 0:
        return text[:i] + text[i + 1:]
    if kind == 1:
        return text[:i] + rng.choice(PUNCT) + text[i:]
    if kind == 2:
        return text[:i] + rng.choice(PUNCT) + text[i + 1:]
    if kind == 3:
        return text[:i]
    lines = text.split("\n")
    a, b = rng.randrange(len(lines)), rng.randrange(len(lines))
    if kind == 4:
        lines[a], lines[b] = lines[b], lines[a]
    elif kind == 5:
        lines.insert(a, lines[b])
    elif kind == 6:
        lines[a] = "  " * rng.randrange(4) + lines[a].lstrip()
    else:
        noise = "".join(chr(rng.randrange(1, 256)) for _ in range(rng.randrange(1, 12)))
        lines[a] = lines[a] + noise
    return "\n".join(lines)


def main():
    out, count, seed = sys.argv[1], int(sys.argv[2]), int(sys.argv[3])
    sources = [open(p, encoding="utf-8").read() for p in sys.argv[4:]]
    rng = random.Random(seed)
    for k in range(count):
        text = rng.choice(sources)
        for _ in range(rng.randrange(1, 4)):
            text = mutate(text, rng)
        with open(f"{out}/m{k:04d}.yaml", "w", encoding="utf-8", errors="surrogateescape") as f:
            f.write(text)


main()

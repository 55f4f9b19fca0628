#!/usr/bin/env python3
"""The house rules of src/, checked from the source text:

- no file over 1,000 lines (tests included);
- no import circle between source files: every `crate::`, `super::` and
  `self::` path (in `use` lines and in code) is resolved to the file that
  defines it, and the strongly connected components of that graph must all be
  single files;
- no import from a lower layer to a higher one (the table LAYERS below).

    python3 scripts/layout-check.py        # prints what breaks a rule; exit 1 if any
"""

import os
import re
import sys

ROOT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "src")
MAX_LINES = 1000

# What each top-level module may import (besides itself). The engine imports
# nothing of the service; the pages and the API never import each other nor
# the server; shared state sits below both.
UTIL = {"weight", "metrics", "cache"}
LAYERS = {
    "engine": set(),
    "weight": {"engine"},
    "metrics": {"engine"},
    "cache": {"engine"},
    "input": {"engine"} | UTIL,
    "answer": {"engine", "input"} | UTIL,
    "state": {"engine"} | UTIL,
    "api": {"engine", "input", "answer", "state"} | UTIL,
    "web": {"engine", "input", "answer", "state"} | UTIL,
    "server": {"engine", "input", "answer", "state", "api", "web"} | UTIL,
}


def module_of(path):
    rel = os.path.relpath(path, ROOT)[:-3].split(os.sep)
    if rel[-1] in ("mod", "lib", "main"):
        rel = rel[:-1]
    return rel


def file_of(parts, files):
    """The file defining the longest prefix of module path `parts`."""
    for n in range(len(parts), -1, -1):
        prefix = parts[:n]
        for cand in (os.path.join(ROOT, *prefix) + ".rs", os.path.join(ROOT, *prefix, "mod.rs")):
            if n == 0:
                cand = os.path.join(ROOT, "lib.rs")
            if cand in files:
                return cand
    return None


def strip(text):
    text = re.sub(r"//[^\n]*", "", text)
    text = re.sub(r"/\*.*?\*/", "", text, flags=re.S)
    text = re.sub(r'r(#*)".*?"\1', '""', text, flags=re.S)
    text = re.sub(r'b?"(?:\\.|[^"\\])*"', '""', text, flags=re.S)
    text = re.sub(r"b?'(?:\\.|[^'\\])'", "' '", text)
    # A visibility restriction names a module without importing it.
    text = re.sub(r"pub\(in [^)]*\)", "pub", text)
    return text


def expand(tree):
    """`a::{b, c::{d, e}}` into its full paths."""
    tree = re.sub(r"\s+", "", tree)
    m = re.match(r"^(.*?)\{(.*)\}$", tree)
    if not m:
        return [tree]
    head, body = m.group(1), m.group(2)
    items, depth, cur = [], 0, ""
    for ch in body:
        if ch == "{":
            depth += 1
        elif ch == "}":
            depth -= 1
        if ch == "," and depth == 0:
            items.append(cur)
            cur = ""
        else:
            cur += ch
    if cur:
        items.append(cur)
    out = []
    for it in items:
        for e in expand(it):
            out.append(head + e if e != "self" else head.rstrip(":"))
    return out


def references(path, files):
    text = strip(open(path, encoding="utf-8").read())
    base = module_of(path)
    # Inline modules (`mod tests { ... }`): track where they open and close.
    refs = set()
    stack = []  # brace depth at which each inline module opened
    depth = 0
    tokens = re.finditer(r"\bmod\s+[A-Za-z_]\w*\s*\{|\{|\}|\buse\s+[^;]+;|(?<![\w:])[A-Za-z_]\w*(?:::[A-Za-z_]\w*)+", text)
    for t in tokens:
        s = t.group(0)
        if s.startswith("mod"):
            depth += 1
            stack.append(depth)
            continue
        if s == "{":
            depth += 1
            continue
        if s == "}":
            if stack and stack[-1] == depth:
                stack.pop()
            depth -= 1
            continue
        here = base + ["<inline>"] * len(stack)
        paths = expand(s[3:].strip().rstrip(";").replace("pub ", "")) if s.startswith("use") else [s]
        for p in paths:
            p = p.split(" as ")[0] if " as " in p else re.sub(r"as\w+$", "", p)
            parts = [x for x in p.split("::") if x]
            if not parts:
                continue
            if parts[0] == "crate":
                absolute = parts[1:]
            elif parts[0] in ("super", "self"):
                cur = list(here)
                while parts and parts[0] in ("super", "self"):
                    if parts[0] == "super":
                        cur = cur[:-1]
                    parts = parts[1:]
                absolute = cur + parts
            else:
                # A relative path through a child module of this file's own module.
                mine = [x for x in here if x != "<inline>"]
                child = os.path.join(ROOT, *mine, parts[0])
                if child + ".rs" not in files and os.path.join(child, "mod.rs") not in files:
                    continue
                absolute = mine + parts
            absolute = [x for x in absolute if x != "<inline>"]
            target = file_of(absolute, files)
            if target and target != path:
                refs.add(target)
    return refs


def sccs(graph):
    index, low, on, stack, out, counter = {}, {}, set(), [], [], [0]

    def visit(v):
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on.add(v)
        for w in graph[v]:
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on.discard(w)
                comp.append(w)
                if w == v:
                    break
            out.append(comp)

    sys.setrecursionlimit(10000)
    for v in graph:
        if v not in index:
            visit(v)
    return out


def main():
    files = set()
    for d, _, names in os.walk(ROOT):
        for n in names:
            if n.endswith(".rs"):
                files.add(os.path.join(d, n))
    rel = lambda p: os.path.relpath(p, os.path.join(ROOT, ".."))
    problems = []
    for f in sorted(files):
        n = sum(1 for _ in open(f, encoding="utf-8"))
        if n > MAX_LINES:
            problems.append(f"{rel(f)}: {n} lines (at most {MAX_LINES})")
    graph = {f: references(f, files) for f in files}
    for comp in sccs(graph):
        if len(comp) > 1:
            problems.append("import circle: " + ", ".join(sorted(rel(c) for c in comp)))
    for f, targets in sorted(graph.items()):
        top = module_of(f)[:1]
        if not top or top[0] not in LAYERS:
            continue
        for t in sorted(targets):
            ttop = module_of(t)[:1]
            if not ttop or ttop[0] == top[0]:
                continue
            if ttop[0] not in LAYERS[top[0]]:
                problems.append(f"{rel(f)} imports {rel(t)}: {top[0]} may not import {ttop[0]}")
    for p in problems:
        print(p)
    print(f"layout: {len(files)} files, {sum(len(v) for v in graph.values())} imports between files, "
          f"{len(problems)} problems")
    sys.exit(1 if problems else 0)


if __name__ == "__main__":
    main()

#!/usr/bin/env python3
"""Reruns the README's sample commands and writes their current output into it.

Run from the repository's top folder after `bash scripts/build.sh`:
    python3 scripts/refresh-readme-samples.py && git diff README.md
Refreshed: a ```sh block holding one build/bin command and followed by a plain ``` block (its
output), and a ``` block that opens with '$ build/bin/...' (continuation lines allowed) and
elides nothing ('...'). Commands run in a scratch folder beside links to build/ and models/, so
their output files land there and the printed paths stay relative."""
import os
import subprocess
import tempfile

root = os.getcwd()
lines = open('README.md').read().split('\n')
scratch = tempfile.TemporaryDirectory()  # removed when the script ends
work = scratch.name
for d in ('build', 'models', 'examples', 'bench'):
    os.symlink(os.path.join(root, d), os.path.join(work, d))
def run(cmd):
    r = subprocess.run(cmd, shell=True, cwd=work, capture_output=True, text=True, timeout=300)
    return r.stdout.rstrip('\n').split('\n')
out = []; i = 0; changed = 0
while i < len(lines):
    l = lines[i]
    if l == '```sh' and i + 3 < len(lines) and lines[i+1].startswith('build/bin/ordex-') and lines[i+2] == '```' and lines[i+3] == '```':
        j = lines.index('```', i + 4)
        new = run(lines[i+1].split('#')[0])
        if new != lines[i+4:j]: changed += 1
        out += lines[i:i+4] + new + ['```']; i = j + 1; continue
    if l == '```' and i + 1 < len(lines) and lines[i+1].startswith('$ build/bin/ordex-'):
        j = lines.index('```', i + 1)
        body = lines[i+1:j]
        k = 0
        while body[k].endswith('\\'): k += 1
        cmd = ' '.join(b.rstrip('\\').strip() for b in body[:k+1])[2:]
        if not any(b.strip() == '...' for b in body) and sum(b.startswith('$ ') for b in body) == 1:
            new = body[:k+1] + run(cmd)
            if new != body: changed += 1
            out += ['```'] + new + ['```']; i = j + 1; continue
    out.append(l); i += 1
open('README.md', 'w').write('\n'.join(out))
print('blocks changed:', changed)

#!/usr/bin/python3
"""The published reference data is whole: every file named in MANIFEST.sha256
exists with that SHA-256, every data folder has its SOURCE.md, and no file in
the folder is missing from the manifest. A missing or altered reference file
fails here by name, as well as in the test that reads it.

usage: reference_data_test.py REFERENCE_DIR
"""
import hashlib
import os
import sys

ref = sys.argv[1]
problems = []
manifest = os.path.join(ref, "MANIFEST.sha256")
listed = {}
try:
    with open(manifest, encoding="ascii") as f:
        for number, line in enumerate(f, 1):
            parts = line.split()
            if len(parts) != 2:
                problems.append(f"{manifest}:{number}: expected 'SHA256  PATH'")
                continue
            listed[parts[1]] = parts[0]
except OSError as e:
    problems.append(f"{manifest}: cannot open ({e.strerror})")

for rel, want in sorted(listed.items()):
    path = os.path.join(ref, rel)
    try:
        with open(path, "rb") as f:
            got = hashlib.sha256(f.read()).hexdigest()
    except OSError as e:
        problems.append(f"{path}: missing ({e.strerror})")
        continue
    if got != want:
        problems.append(f"{path}: SHA-256 {got}, manifest says {want}")

on_disk = set()
for root, _, files in os.walk(ref):
    for name in files:
        rel = os.path.relpath(os.path.join(root, name), ref)
        if rel != "MANIFEST.sha256":
            on_disk.add(rel)
for rel in sorted(on_disk - set(listed)):
    problems.append(f"{os.path.join(ref, rel)}: not in MANIFEST.sha256")
folders = {os.path.dirname(rel) for rel in listed if os.path.dirname(rel)}
for folder in sorted(folders):
    if f"{folder}/SOURCE.md" not in listed:
        problems.append(f"{os.path.join(ref, folder)}: no SOURCE.md")
if len(listed) < 20:
    problems.append(f"{manifest}: lists {len(listed)} files, expected at least 20")

for p in problems:
    print("FAIL", p)
print(f"reference data: {len(listed)} files checked, {len(problems)} problems")
sys.exit(1 if problems else 0)

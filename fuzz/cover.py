#!/usr/bin/env python3
# Picks a small seed corpus to commit from everything a fuzzing session found:
# the committed seeds first, then greedily the input adding the most libFuzzer
# features not yet covered (smallest first on ties), until nothing is gained or
# the cap is reached. libFuzzer's own -set_cover_merge keeps every input with a
# unique feature, which is too many to commit. Usage (see docs/reliability.md):
#   <target binary> -set_cover_merge=1 -use_counters=0 -merge_control_file=CTL OUT corpus/T FOUND
#   python3 cover.py CTL corpus/T NEW_DIR [CAP]
import os
import shutil
import sys

ctl, seeds_dir, out = sys.argv[1], os.path.abspath(sys.argv[2]), sys.argv[3]
cap = int(sys.argv[4]) if len(sys.argv) > 4 else 190
lines = open(ctl).read().split("\n")
n = int(lines[0])
files = lines[2 : 2 + n]
features = {}
for line in lines[2 + n :]:
    if line.startswith("FT "):
        parts = line.split()
        features[int(parts[1])] = set(map(int, parts[2:]))
every = set().union(*features.values())
chosen = [i for i, f in enumerate(files) if os.path.abspath(f).startswith(seeds_dir + os.sep)]
got = set().union(*(features.get(i, set()) for i in chosen))
while len(chosen) < cap:
    best = max(features, key=lambda i: (len(features[i] - got), -os.path.getsize(files[i])))
    if not features[best] - got:
        break
    chosen.append(best)
    got |= features[best]
os.makedirs(out, exist_ok=True)
for i in chosen:
    shutil.copy(files[i], os.path.join(out, os.path.basename(files[i])))
print(f"{len(chosen)} files cover {len(got)} of {len(every)} features")

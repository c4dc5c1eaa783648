"""Shared spec texts for the experiment tests (tiny sample counts: the suite stays fast)."""

ISSUE_SPEC = '''
name = "box-and-ring"
[group]
family = "SU"
n = 2
metric = "physics"
[field]
coupling = 1.0
spacing = 0.125
gauge = "axial-y"
reference = 0.0
scheme = "heat"
density = 1.0
[[loops]]
name = "box"
vertices = [[0.0, 0.0], [2.0, 0.0], [2.0, 1.0], [0.0, 1.0]]
[[loops]]
name = "ring"
circle = { center = [1.0, 3.0], radius = 0.5, sides = 64 }
turns = 2
[[loops]]
name = "ell"
moves = "R4 U2 L2 U2 L2 D4"
start = [0.0, 0.0]
[observable]
rep = "fundamental"
[run]
samples = 100000
block = 4096
seed = 20261202
'''

TINY_SPEC = '''
name = "tiny"
[group]
family = "SU"
n = 2
metric = "physics"
[field]
coupling = 1.0
spacing = 0.25
scheme = "heat"
[[loops]]
name = "box"
vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]
[[loops]]
name = "ell"
moves = "R2 U1 L1 U1 L1 D2"
start = [0.0, 0.0]
[run]
samples = 600
block = 64
seed = 7
'''

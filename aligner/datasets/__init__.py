"""Data with a known answer: seeded generators, test instances and the bundled demo scenarios.

``synthetic`` grows graphs (power-law with clustering, duplication-divergence) and builds pairs
with a known alignment (a noisy relabelled copy with a prior of decoys; two species evolved
from one ancestor); its loops are compiled in ``aligner.kernels.synthetic``. ``instances`` turns
those pairs into what benchmarks and tests feed the API (networks, tables, TSV files, hidden
connectome tasks). ``demo`` says where the one copy of the demo data (``demo_pairs/``, shipped
inside the package) is, and ``firefly`` and ``registry`` write its files from fixed seeds.
Everything here is a pure function of its seeds.
"""

"""The lane network and its search: Model to state network and weights (``build``), the one search
core (``search``), the array representation and landmark bound for large networks
(``engine``), and the cost-time frontier (``pareto``). Knows nothing of workbooks."""

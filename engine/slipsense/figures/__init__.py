"""Figures drawn from step results (matplotlib; never imported by the core, steps or tables).

Each module draws from the :class:`~slipsense.tables.Table` objects a step returned, so a
figure shows exactly the numbers written to the layers.
"""

"""The computational core of slipsense: numpy only, vectorised, GIS-independent.

Frame x = east, y = north, z = up (metres); angles in degrees; planes as dip direction / dip with
right-hand-rule strike; azimuths from grid north of the working projected CRS unless stated.
"""

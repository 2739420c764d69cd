#!/usr/bin/python3
# make_data.py - writes pumps.csv, the invented maintenance log that the
# pumps sample fits: one row per pump, with running hours since overhaul,
# bearing temperature and whether it failed within the next 90 days.
# Run once, from this directory:  /usr/bin/python3 make_data.py > pumps.csv
import math
import random

ROWS = 4000
SEED = 20240917

# The generating ("true") parameters, in the scaled units of pumps.dvs;
# main.c compares its fit with these same numbers.
W_HOURS, W_TEMP, BIAS = 1.1, 0.7, -1.6
HOURS_MID, HOURS_SPAN = 8000.0, 4000.0
TEMP_MID, TEMP_SPAN = 65.0, 10.0


def main():
    rng = random.Random(SEED)
    print("pump,hours,bearing_temp_c,failed")
    for row in range(ROWS):
        hours = round(rng.uniform(0.0, 16000.0))
        # Bearings run warmer as they wear: a drift with hours plus scatter.
        temp = round(58.0 + 8.0 * hours / 16000.0 + rng.gauss(0.0, 6.0), 1)
        # The failure chance uses the rounded values written to the file,
        # so the logistic model holds exactly for the data as read.
        z = (W_HOURS * (hours - HOURS_MID) / HOURS_SPAN
             + W_TEMP * (temp - TEMP_MID) / TEMP_SPAN + BIAS)
        failed = 1 if rng.random() < 1.0 / (1.0 + math.exp(-z)) else 0
        print(f"P{row + 1:04d},{hours},{temp:.1f},{failed}")


main()

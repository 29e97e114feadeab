"""The DuckDB reference for the flags benchmark: one least-squares slope of R1+R2 against the
visit date (in days) per circuit, straight from the visit file, with nothing checked.

Usage: python3 bench/duckdb_slopes.py FILE.csv
Prints the circuits, a checksum of the slopes, and the query's own seconds (without Python's
start-up), so the script can compare against either.
"""

import sys
import time

import duckdb

QUERY = """
SELECT count(*) AS circuits, sum(slope) AS checksum FROM (
    SELECT property_ref, board, circuit,
           regr_slope(r1r2_ohm, date_diff('day', DATE '1970-01-01', visit_date)) AS slope
    FROM read_csv(?, header = true)
    GROUP BY property_ref, board, circuit
)
"""


def main() -> None:
    path = sys.argv[1]
    start = time.perf_counter()
    con = duckdb.connect()
    circuits, checksum = con.execute(QUERY, [path]).fetchone()
    seconds = time.perf_counter() - start
    print(f"circuits {circuits} checksum {checksum:.6f} query_seconds {seconds:.3f}")


if __name__ == "__main__":
    main()

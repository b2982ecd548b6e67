"""Writes tests/data/types.parquet: the catalogue's six situations (tests/all/catalogue.rs,
`CSV`) with every column in a Parquet type the loader must cast: int16 id, uint8 group,
int8 weight, decimal costs (money exported from a database), uint16 income, uint32 flag;
plus a date column and a list column that it must refuse by name.

Run from the repository root: pip install pyarrow && python3 tests/reference/make_parquet_types.py
"""
import decimal

import pyarrow as pa
import pyarrow.parquet as pq

D = decimal.Decimal
ROWS = [
    (1, 1, "a", 1, "1.0", "2.0", "3.0", 10),
    (2, 1, "b", 1, "1.5", "2.5", "3.5", 20),
    (3, 2, "c", 1, "1.2", "2.2", "3.2", 30),
    (4, 2, "a", 2, "1.1", "2.1", "3.1", 40),
    (5, 3, "b", 1, "2.1", "1.1", "3.3", 50),
    (6, 3, "c", 1, "1.9", "2.4", "1.3", 60),
]
cols = list(zip(*ROWS))
money = lambda i, t: pa.array([D(v) for v in cols[i]], t)
table = pa.table(
    {
        "id": pa.array(cols[0], pa.int16()),
        "who": pa.array(cols[1], pa.uint8()),
        "mode": pa.array(cols[2]),
        "wt": pa.array(cols[3], pa.int8()),
        "ca": money(4, pa.decimal128(9, 2)),
        "cb": money(5, pa.decimal128(9, 2)),
        "cc": money(6, pa.decimal128(18, 3)),
        "inc": pa.array(cols[7], pa.uint16()),
        "flag": pa.array([0, 1, 0, 1, 0, 1], pa.uint32()),
        "when": pa.array(list(range(6)), pa.date32()),
        "lst": pa.array([[v] for v in range(6)]),
    }
)
pq.write_table(table, "tests/data/types.parquet")

"""db_load.py: the test databases of tests/shell/postgres.sh, made from
tests/data/db_plots.csv: an SQLite file (Python's sqlite3 module) and the
SQL text that loads the same tables into PostgreSQL (psql), plus the
expected summaries from Python's statistics module (an outside reference:
statistics.mean, statistics.stdev, and statistics.quantiles with
method='inclusive', which is the type-7 rule of Hyndman and Fan 1996).
    usage: db_load.py CSV SQLITE_FILE PG_SQL_FILE EXPECT_LUA_FILE"""
import csv
import sqlite3
import statistics
import sys

src, db_path, sql_path, expect_path = sys.argv[1:5]
with open(src, newline="") as f:
    rows = list(csv.reader(f))
head, body = rows[0], rows[1:]
types = {"plot": "INTEGER", "soil": "TEXT", "rain": "DOUBLE PRECISION",
         "treated": "INTEGER", "yield": "DOUBLE PRECISION", "note": "TEXT"}


def value(name, cell):
    if cell == "":
        return None
    if types[name] == "INTEGER":
        return int(cell)
    if types[name] == "DOUBLE PRECISION":
        return float(cell)
    return cell


data = [[value(n, c) for n, c in zip(head, r)] for r in body]
hostile = '"x""; DROP TABLE y; --"'
hostile_cols = '("we""ird; col" DOUBLE PRECISION, "ünï cøde" TEXT, "a b" INTEGER)'
ddl = ["CREATE TABLE plots (%s)" % ", ".join('"%s" %s' % (n, types[n]) for n in head),
       "CREATE TABLE y (a INTEGER)",
       "INSERT INTO y VALUES (7)",
       "CREATE TABLE %s %s" % (hostile, hostile_cols),
       "INSERT INTO %s VALUES (1.5, 'é; ''quoted''', 1), (-2.25, NULL, 2), (NULL, 'z', 3)" % hostile,
       "CREATE TABLE empty_one (a INTEGER, b TEXT)",
       "CREATE VIEW flags AS SELECT plot, treated = 1 AS treated_flag FROM plots"]

con = sqlite3.connect(db_path)
for s in ddl:
    con.execute(s)
con.executemany("INSERT INTO plots VALUES (%s)" % ",".join("?" * len(head)), data)
con.commit()
con.close()

with open(sql_path, "w") as f:
    for s in ddl:
        f.write(s + ";\n")
    f.write("CREATE SEQUENCE counter;\n")
    f.write("COPY plots FROM STDIN WITH (FORMAT csv, HEADER true);\n")
    with open(src) as g:
        f.write(g.read())
    f.write("\\.\n")

with open(expect_path, "w") as f:
    f.write("-- from Python's statistics module (tests/lib/db_load.py)\nreturn {\n")
    for name in ("rain", "yield", "plot"):
        v = [r[head.index(name)] for r in data if r[head.index(name)] is not None]
        q = statistics.quantiles(v, n=4, method="inclusive")
        f.write("  [%r] = {n = %d, mean = %r, sd = %r, q1 = %r, median = %r, q3 = %r},\n"
                % (name, len(v), float(statistics.mean(v)), statistics.stdev(v),
                   float(q[0]), float(q[1]), float(q[2])))
    f.write("}\n")

"""
How much of a chain's truth the components of a stored run can give at all: every way of putting
the run's Gaussian components into g groups (each customer goes with its most probable component),
scored by the adjusted Rand index (ARI) against the truth on placed customers; the best grouping
for each g is printed beside the ARI of the run's own segments. No combining rule can beat the
best grouping of the same components, so this tells whether a low ARI comes from the components
(the fit) or from the way they were combined.

    /usr/bin/python3 test/bench/best-grouping.py DB TRUTH.csv RUN_ID [--max-groups G]

Tries g^(k-1) groupings for each g, so it is meant for k up to about 8 (a minute or two here).
Needs only the Python standard library. The ARI is the Hubert & Arabie (1985) formula on the
contingency table; the ARI of the run's own segments agrees with segments-against-truth.ts.
"""
import argparse
import csv
import itertools
import sqlite3
import struct
from math import comb

parser = argparse.ArgumentParser()
parser.add_argument('db')
parser.add_argument('truth')
parser.add_argument('run_id', type=int)
parser.add_argument('--max-groups', type=int, default=8)
arguments = parser.parse_args()

with open(arguments.truth, newline='') as handle:
    reader = csv.DictReader(handle)
    label_column = [name for name in reader.fieldnames if name != 'customer_id'][0]
    truth = {row['customer_id']: row[label_column] for row in reader}

connection = sqlite3.connect(arguments.db)
k = connection.execute('SELECT k FROM runs WHERE run_id = ?', (arguments.run_id,)).fetchone()[0]
rows = connection.execute(
    'SELECT customer_id, segment_index, posteriors FROM run_memberships '
    'WHERE run_id = ? AND too_new = 0 AND segment_index IS NOT NULL',
    (arguments.run_id,),
).fetchall()
labels = sorted({truth[customer_id] for customer_id, _, _ in rows})
label_index = {label: j for j, label in enumerate(labels)}
customers = len(rows)


def adjusted_rand_index(table):
    """ARI of a groups × truth contingency table (lists of counts)."""
    together = sum(comb(count, 2) for row in table for count in row)
    by_group = sum(comb(sum(row), 2) for row in table)
    by_truth = sum(comb(sum(row[j] for row in table), 2) for j in range(len(labels)))
    expected = by_group * by_truth / comb(customers, 2)
    largest = (by_group + by_truth) / 2
    return 0.0 if largest == expected else (together - expected) / (largest - expected)


components = [[0] * len(labels) for _ in range(k)]
segment_count = 1 + max(segment for _, segment, _ in rows)
segments = [[0] * len(labels) for _ in range(segment_count)]
for customer_id, segment, blob in rows:
    posteriors = struct.unpack(f'<{k}d', blob)
    component = max(range(k), key=posteriors.__getitem__)
    components[component][label_index[truth[customer_id]]] += 1
    segments[segment][label_index[truth[customer_id]]] += 1

print(f'run {arguments.run_id}: {customers} placed customers, k = {k} components, truth column "{label_column}"')
print(f'the run\'s own {segment_count} segments: ARI {adjusted_rand_index(segments):.3f}')
for groups in range(1, min(k, arguments.max_groups) + 1):
    best, best_grouping = -1.0, None
    # Component 0 always goes to group 0: the other groupings are relabellings of the same ones.
    for rest in itertools.product(range(groups), repeat=k - 1):
        grouping = (0,) + rest
        if len(set(grouping)) != groups:
            continue
        table = [[0] * len(labels) for _ in range(groups)]
        for component, group in enumerate(grouping):
            for j, count in enumerate(components[component]):
                table[group][j] += count
        score = adjusted_rand_index(table)
        if score > best:
            best, best_grouping = score, grouping
    print(f'{groups} groups: best ARI {best:.3f}, components to groups {list(best_grouping)}')

"""
How far a chain's truth can be recovered from the run's stored features at all: quadratic
discriminant analysis (one Gaussian per truth label, scikit-learn's QuadraticDiscriminantAnalysis)
TRAINED ON THE TRUTH LABELS, scored by 5-fold cross-validation, then the adjusted Rand index of its
predictions against the truth. An unsupervised default run is not expected to beat it.

Beside it, for each feature set, how separable the truth is to an UNSUPERVISED reference fit: a
scikit-learn GaussianMixture with as many full-covariance components as the truth has labels
(atypical customers left out of the count; 10 k-means starts, seed 0), one label per component, its
ARI against the truth. This is the yardstick in which the segments issue states the separation of
the chain its ARI target was set on (4 components on log visit rate and log basket: 0.85).

    /usr/bin/python3 test/bench/supervised-ceiling.py DB TRUTH.csv RUN_ID [FEATURE,FEATURE …]

Feature sets default to: visits+basket, visits+basket+days since last visit, visits+basket+gaps
since last visit (the app's defaults without departments), and every stored feature. Counts
(visits, basket, days, gaps, spend, tenure, purchases) take log1p as the app's default transforms do;
shares and trends are used as they are. Needs Debian's python3-sklearn and python3-numpy.
"""
import csv
import json
import sqlite3
import sys

import numpy as np
from sklearn.discriminant_analysis import QuadraticDiscriminantAnalysis
from sklearn.metrics import adjusted_rand_score
from sklearn.mixture import GaussianMixture
from sklearn.model_selection import cross_val_predict

UNLOGGED = {'fresh_share', 'spend_trend', 'refund_share'}

db_path, truth_path, run_id = sys.argv[1], sys.argv[2], int(sys.argv[3])
with open(truth_path, newline='') as handle:
    reader = csv.DictReader(handle)
    label_column = [name for name in reader.fieldnames if name != 'customer_id'][0]
    truth = {row['customer_id']: row[label_column] for row in reader}

connection = sqlite3.connect(db_path)
features = json.loads(connection.execute('SELECT stored_features FROM runs WHERE run_id = ?', (run_id,)).fetchone()[0])
rows = connection.execute('SELECT customer_id, features FROM run_memberships WHERE run_id = ? AND too_new = 0', (run_id,)).fetchall()
values = np.array([np.frombuffer(blob, dtype='<f8') for _, blob in rows])
labels = np.array([truth[customer_id] for customer_id, _ in rows])
for j, feature in enumerate(features):
    if feature not in UNLOGGED:
        values[:, j] = np.log1p(values[:, j])

sets = [argument.split(',') for argument in sys.argv[4:]] or [
    ['visits_per_month', 'average_basket'],
    ['visits_per_month', 'average_basket', 'days_since_last_visit'],
    ['visits_per_month', 'average_basket', 'gaps_since_last_visit'],
    features,
]
tier_count = len(set(labels) - {'atypical'})
print(f'run {run_id}: {len(rows)} placed customers, truth column "{label_column}"')
for chosen in sets:
    columns = [features.index(feature) for feature in chosen if feature in features]
    matrix = np.nan_to_num(values[:, columns])
    predicted = cross_val_predict(QuadraticDiscriminantAnalysis(reg_param=1e-3), matrix, labels, cv=5)
    mixture = GaussianMixture(n_components=tier_count, covariance_type='full', n_init=10, random_state=0).fit(matrix)
    print(
        f'{",".join(chosen)}: ARI {adjusted_rand_score(labels, predicted):.3f}, accuracy {(predicted == labels).mean():.3f}; '
        f'unsupervised reference ({tier_count} components, full): ARI {adjusted_rand_score(labels, mixture.predict(matrix)):.3f}'
    )

#!/usr/bin/python3
"""Reference values for PLS-DA and kNN, made with scikit-learn (Debian python3-sklearn 1.2.1).

Data: Fisher's iris (fixtures/open/iris.csv, scikit-learn's bundled copy). Output:
fixtures/reference/discriminant.json, read by tests/unit/analysis/discriminant.test.ts (which needs no Python).
Run: /usr/bin/python3 scripts/reference/discriminant.py
"""
import csv, json, os
import numpy as np
import sklearn
from sklearn.cross_decomposition import PLSRegression
from sklearn.neighbors import KNeighborsClassifier

root = os.path.join(os.path.dirname(__file__), '..', '..')
rows = list(csv.reader(open(os.path.join(root, 'fixtures/open/iris.csv'))))[1:]
ids = [r[0] for r in rows]
labels = [r[1] for r in rows]
X = np.array([[float(v) for v in r[2:]] for r in rows])
classes = sorted(set(labels))
Y = np.array([[1.0 if l == c else 0.0 for c in classes] for l in labels])

out = {'source': 'scikit-learn %s on fixtures/open/iris.csv' % sklearn.__version__, 'classes': classes, 'pls': {}, 'knn': {}}
for A in (1, 2, 3):
    m = PLSRegression(n_components=A, scale=False).fit(X, Y)
    yhat = m.predict(X)
    out['pls'][str(A)] = {
        'x_weights': m.x_weights_.T.tolist(),
        'x_loadings': m.x_loadings_.T.tolist(),
        'y_loadings': m.y_loadings_.T.tolist(),
        'x_rotations': m.x_rotations_.T.tolist(),
        'x_scores': m.transform(X).tolist(),
        'predict': yhat.tolist(),
        'predicted_class': [classes[i] for i in yhat.argmax(axis=1)],
    }

train = list(range(0, 150, 2))
test = list(range(1, 150, 2))
for k in (1, 3, 5, 7, 15):
    m = KNeighborsClassifier(n_neighbors=k, algorithm='brute').fit(X[train], [labels[i] for i in train])
    out['knn'][str(k)] = {
        'train': train,
        'test': test,
        'predict': m.predict(X[test]).tolist(),
        'proba': m.predict_proba(X[test]).tolist(),
    }

# a three-way vote tie: one neighbour of each class (which class wins is the implementation's tie rule)
tie = KNeighborsClassifier(n_neighbors=3, algorithm='brute').fit([[0.0], [1.0], [2.0]], ['a', 'b', 'c'])
out['knn_tie'] = {'train': [[0.0], [1.0], [2.0]], 'labels': ['a', 'b', 'c'], 'x': [0.1], 'k': 3, 'predict': tie.predict([[0.1]]).tolist()[0]}

with open(os.path.join(root, 'fixtures/reference/discriminant.json'), 'w') as f:
    json.dump(out, f, indent=1)
print('written')

"""Reference for bench/init_seal.sh: read the CSV with pandas, split 80/20 at random,
hash every row (pandas' vectorised row hash), and write the development rows."""
import sys

import numpy as np
import pandas as pd

path = sys.argv[1]
df = pd.read_csv(path)
rng = np.random.default_rng(1)
holdout = rng.random(len(df)) < 0.2
hashes = pd.util.hash_pandas_object(df, index=False)
dev = df[~holdout]
dev.to_csv(path + ".pandas-dev.csv", index=False)
print(len(df), int(holdout.sum()), int(hashes.sum() % 1000))

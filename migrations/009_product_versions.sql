-- Every change of a product's settings is kept as a version with the time it came into force, so a past
-- week is judged by the settings of its own time and a signed report can be reproduced.
CREATE TABLE product_versions (
  product_id INTEGER NOT NULL REFERENCES products (id),
  version INTEGER NOT NULL CHECK (version >= 1),
  valid_from INTEGER NOT NULL,
  code TEXT NOT NULL,
  name TEXT NOT NULL,
  nominal REAL NOT NULL,
  unit TEXT NOT NULL,
  target REAL NOT NULL,
  tare REAL NOT NULL,
  subgroup_size INTEGER NOT NULL,
  sampling_minutes INTEGER NOT NULL,
  window_size INTEGER NOT NULL,
  sigma REAL,
  lsl REAL,
  usl REAL,
  entry_basis TEXT NOT NULL,
  cost_per_kg REAL,
  rules TEXT NOT NULL,
  PRIMARY KEY (product_id, version)
) WITHOUT ROWID;
CREATE INDEX product_versions_in_force ON product_versions (product_id, valid_from);

-- The settings as they stand become each product's first version, in force since the product was made.
INSERT INTO product_versions (product_id, version, valid_from, code, name, nominal, unit, target, tare, subgroup_size,
  sampling_minutes, window_size, sigma, lsl, usl, entry_basis, cost_per_kg, rules)
SELECT id, 1, created_at, code, name, nominal, unit, target, tare, subgroup_size, sampling_minutes, window_size, sigma,
  lsl, usl, entry_basis, cost_per_kg, rules FROM products;

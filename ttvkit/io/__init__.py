"""Files in and out: raw CSV/ECSV tables, atomic writes, output folders that appear whole or not at all."""

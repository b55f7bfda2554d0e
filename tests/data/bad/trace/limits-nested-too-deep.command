compare side-trace.csv --limits {input} --csv {out}

predict {input} -o {out}

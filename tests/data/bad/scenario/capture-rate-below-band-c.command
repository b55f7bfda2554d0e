scan {input} --csv {out}

scan {input} --band C --step 257Hz --csv {out}

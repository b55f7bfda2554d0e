spectrum --capture {input} --column 5 --csv {out}

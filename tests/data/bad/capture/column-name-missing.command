spectrum --capture {input} --column CH9 --csv {out}

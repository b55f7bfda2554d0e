spectrum --capture {input} --fundamental 100kV --csv {out}

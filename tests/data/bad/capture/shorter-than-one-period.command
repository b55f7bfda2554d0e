spectrum --capture {input} --fundamental 100kHz --csv {out}

spectrum --capture {input} --quantity power --csv {out}

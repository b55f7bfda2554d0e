spectrum --capture {input} --scale 10 --csv {out}

compare {input} --limits cispr32-class-b-conducted --column peak --csv {out}

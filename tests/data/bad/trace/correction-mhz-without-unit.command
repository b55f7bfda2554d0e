compare {input} --limits cispr32-class-b-conducted --correction side-correction-mhz.csv --csv {out}

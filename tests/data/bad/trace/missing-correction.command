compare {input} --limits cispr32-class-b-conducted --correction nowhere.csv --csv {out}

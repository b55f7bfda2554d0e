compare {input} --limits cispr32-class-b-conducted --correction side-bad-correction.txt --csv {out}

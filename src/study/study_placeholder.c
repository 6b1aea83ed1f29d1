/* study_placeholder.c - keeps the study library non-empty until it lands. */
int mc__study_placeholder(void);
int mc__study_placeholder(void) { return 0; }

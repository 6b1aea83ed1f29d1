/* reduce_placeholder.c - keeps the reducer library non-empty until it lands. */
int mc__reduce_placeholder(void);
int mc__reduce_placeholder(void) { return 0; }

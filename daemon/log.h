/* log.h: the daemon's log on stderr, with sd-daemon priority prefixes for journald. */
#ifndef GRITLINE_LOG_H
#define GRITLINE_LOG_H

typedef enum LOG_Level { LOG_ERR = 3, LOG_WARNING = 4, LOG_NOTICE = 5, LOG_INFO = 6, LOG_DEBUG = 7 } LOG_Level;

/* Prefixes ("<3>") are written unless stderr is a terminal. */
void LOG_Initialise(const char *program);
void LOG_Message(LOG_Level level, const char *fmt, ...) __attribute__((format(printf, 2, 3)));

#endif

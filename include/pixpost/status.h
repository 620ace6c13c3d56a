/* pixpost — status codes and the thread-local error message.
 *
 * Every library function that can fail returns a pp_status. On failure it
 * also sets a one-sentence message for the calling thread, readable with
 * pp_error_message() until the next failing call on the same thread. The
 * message names the file or option involved and says what a user can do.
 * The library never prints and never exits.
 */
#ifndef PIXPOST_STATUS_H
#define PIXPOST_STATUS_H

typedef enum pp_status {
    PP_OK = 0,
    PP_ERR_ARG,         /* bad argument, option value or spec string */
    PP_ERR_IO,          /* a file could not be opened, read or written */
    PP_ERR_FORMAT,      /* a file is not a readable image of a kind we take */
    PP_ERR_UNSUPPORTED, /* a valid file of a kind we refuse (colour, tiles...) */
    PP_ERR_LIMIT,       /* over a configured limit (pixels, PSF size...) */
    PP_ERR_NOMEM,       /* allocation failed */
    PP_ERR_NUMERIC,     /* a computation produced NaN/Inf or lost meaning */
    PP_ERR_INTERRUPTED  /* stopped by the caller's stop flag */
} pp_status;

/* The message of the last failure on this thread ("" if none): never
 * NULL, owned by the library (thread-local storage, not to be freed). The
 * pointer stays valid, and the text unchanged, until the next failing call
 * on the same thread; copy it to keep it. A successful call does not clear
 * it. Thread-safe: each thread sees its own. */
const char *pp_error_message(void);

/* A short fixed name for a status ("bad argument", "I/O error", ...; a
 * value outside the enum has a name too). Static text: never NULL, never
 * freed. Thread-safe. */
const char *pp_status_name(pp_status s);

#endif

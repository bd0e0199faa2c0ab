/*
 * libFuzzer harness: the value grammar of [parameters]
 * (vg_config_parse_value, docs/config.md "Values").
 *
 * Input: the first byte chooses the parameter (byte % VG_NPARAM, in the
 * order of vg_param_id: gap, reorganization, electronic_coupling,
 * huang_rhys, mode, temperature); the remaining bytes, up to the first NUL,
 * are the value text.  Seeds are made from the parameter lines of
 * the .ini files of configs/ and tests/bad/ by tests/fuzz/seeds.sh.
 *
 * Beyond memory safety (AddressSanitizer, UBSan), every result is held to
 * tests/fuzz/fuzz_check.h: an accepted value is finite, in range and
 * monotonic; a refusal has a status and a message.
 */
#define _POSIX_C_SOURCE 200809L
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>

#include "fuzz_check.h"

int LLVMFuzzerInitialize(int *argc, char ***argv);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerInitialize(int *argc, char ***argv)
{
    (void)argc;
    (void)argv;
    gsl_set_error_handler_off(); /* as main does: GSL reports by status only */
    return 0;
}

/* Control characters never reach the value parser from a file or a --set
 * (the reader refuses them first), and a message quotes the value, so the
 * one-line promise is checked only for text without them. */
static int plain_text(const char *s)
{
    for (; *s; s++)
        if ((unsigned char)*s < 0x20 || (unsigned char)*s == 0x7F)
            return 0;
    return 1;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    vg_param p;
    vg_error err;
    vg_param_id id;
    char *text;
    vg_status st;

    if (size == 0)
        return 0;
    id = (vg_param_id)(data[0] % VG_NPARAM);
    text = malloc(size);
    if (!text)
        return 0;
    memcpy(text, data + 1, size - 1);
    text[size - 1] = '\0';
    memset(&err, 0, sizeof err);
    st = vg_config_parse_value(id, text, &p, &err);
    if (st == VG_OK) {
        fuzz_check_param(id, &p);
    } else {
        fuzz_check_refusal(st, &err, plain_text(text) &&
                           fuzz_utf8_ok((const unsigned char *)text, strlen(text)));
        if (p.v)
            fuzz_broken("refused value", "values left allocated in p");
    }
    free(p.v);
    free(text);
    return 0;
}

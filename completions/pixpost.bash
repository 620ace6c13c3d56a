# bash completion for pixpost (installed as
# <prefix>/share/bash-completion/completions/pixpost).
#
# The commands and options are read from pixpost's own help
# (`pixpost --help`, `pixpost COMMAND --help`) the first time they are
# needed, so this script never lists an option the program does not have.
# Fixed choices (--sampler, --boundary, ...) are completed from the
# lists below; everything else completes file names.

_pixpost_commands()
{
    "$1" --help 2>/dev/null |
        sed -n '/^Commands:/,/^$/s/^  \([a-z][a-z]*\) .*/\1/p'
}

_pixpost_options()
{
    # Option lines of the help: "  -o, --output OUT" or "  --psf SPEC".
    "$1" "$2" --help 2>/dev/null |
        sed -n -e 's/^  \(-[a-zA-Z]\), \(--[a-z][a-z-]*\).*/\1 \2/p' \
               -e 's/^  \(--[a-z][a-z-]*\).*/\1/p'
}

_pixpost()
{
    local cur prev prog cmd i key
    COMPREPLY=()
    cur=${COMP_WORDS[COMP_CWORD]}
    prev=${COMP_WORDS[COMP_CWORD-1]}
    prog=${COMP_WORDS[0]}

    cmd=
    for ((i = 1; i < COMP_CWORD; i++)); do
        case ${COMP_WORDS[i]} in
            -*) ;;
            *) cmd=${COMP_WORDS[i]}; break ;;
        esac
    done

    if [[ -z $cmd ]]; then
        if [[ -z ${_pixpost_cache_commands-} ]]; then
            _pixpost_cache_commands=$(_pixpost_commands "$prog")
        fi
        COMPREPLY=($(compgen -W "$_pixpost_cache_commands --help --version" -- "$cur"))
        return 0
    fi

    case $prev in
        --sampler) COMPREPLY=($(compgen -W "auto gibbs mtc pcn gpcn hmc" -- "$cur")); return 0 ;;
        --boundary) COMPREPLY=($(compgen -W "pad periodic" -- "$cur")); return 0 ;;
        --pages) COMPREPLY=($(compgen -W "z t c" -- "$cur")); return 0 ;;
        --channel) COMPREPLY=($(compgen -W "r g b luma all" -- "$cur")); return 0 ;;
        --progress) COMPREPLY=($(compgen -W "bar plain none" -- "$cur")); return 0 ;;
        --positivity) COMPREPLY=($(compgen -W "log none" -- "$cur")); return 0 ;;
        --iters) COMPREPLY=($(compgen -W "auto" -- "$cur")); return 0 ;;
        --memory-limit) COMPREPLY=($(compgen -W "auto off" -- "$cur")); return 0 ;;
        --spots) COMPREPLY=($(compgen -W "auto" -- "$cur")); return 0 ;;
        --noise) COMPREPLY=($(compgen -W "gaussian gaussian:sigma= poisson:gain=,offset= camera:gain=,offset=,read= auto" -- "$cur")); return 0 ;;
        --prior) COMPREPLY=($(compgen -W "adaptive gmrf1 gmrf2 matern:range=6,nu=1" -- "$cur")); return 0 ;;
        --psf)
            case $cur in
                file:*) COMPREPLY=($(compgen -f -P file: -- "${cur#file:}")) ;;
                *) COMPREPLY=($(compgen -W "gaussian:sigma= airy:na=,wavelength=,pixel= widefield:na=,wavelength=,pixel=,step=,n= file:" -- "$cur")) ;;
            esac
            compopt -o nospace 2>/dev/null
            return 0 ;;
    esac

    if [[ $cur == -* ]]; then
        key=_pixpost_cache_opts_${cmd//[^a-z]/_}
        if [[ -z ${!key-} ]]; then
            printf -v "$key" '%s' "$(_pixpost_options "$prog" "$cmd") --help"
        fi
        COMPREPLY=($(compgen -W "${!key}" -- "$cur"))
        return 0
    fi

    COMPREPLY=($(compgen -f -- "$cur"))
    compopt -o filenames 2>/dev/null
    return 0
}

complete -F _pixpost pixpost

# rigmat.bash - bash completion for rigmat: commands, each command's
# options, and the values of --format, --method, --ctype and --model.  Installed as
# share/bash-completion/completions/rigmat; tests/man.sh checks the lists
# against `rigmat COMMAND --help`.

_rigmat_commands="check linearize discretize modes simulate gains firmware sweep trim parts report"

# The options of one command, as its --help lists them.
_rigmat_options()
{
    case "$1" in
    check) echo "--rate --set --format -o --output --catalog -h --help" ;;
    linearize) echo "--name --ctype --set --format -o --output --catalog -h --help" ;;
    discretize) echo "--rate --period --method --prewarp --delay --name --ctype --set --format -o --output --catalog -h --help" ;;
    modes) echo "--rate --validity --set --format -o --output --catalog -h --help" ;;
    simulate) echo "--model --offset --input --duration --step --rate --tolerance --partial --plot --validity --criterion --horizon --set --format -o --output --catalog -h --help" ;;
    gains) echo "--rate --period --weights --method --name --ctype --set --format -o --output --catalog -h --help" ;;
    firmware) echo "--rate --period -o --output --name --ctype --set --catalog -h --help" ;;
    report) echo "--rate --offset --step-size --duration --no-validity --set --format -o --output --catalog -h --help" ;;
    sweep) echo "--vary --rate --method --threads --name --ctype --set --format -o --output --catalog -h --help" ;;
    trim) echo "--set --format -o --output --catalog -h --help" ;;
    parts) echo "--format --catalog -h --help" ;;
    esac
}

# The --format values a command offers.
_rigmat_formats()
{
    case "$1" in
    linearize | discretize | gains) echo "text json csv c numpy mtx latex" ;;
    simulate) echo "csv json text" ;;
    report | firmware) echo "" ;;
    sweep) echo "json csv c numpy npy" ;;
    *) echo "text json" ;;
    esac
}

_rigmat()
{
    local cur prev cmd
    COMPREPLY=()
    cur=${COMP_WORDS[COMP_CWORD]}
    prev=${COMP_WORDS[COMP_CWORD - 1]}
    if [ "$COMP_CWORD" -eq 1 ]; then
        COMPREPLY=($(compgen -W "$_rigmat_commands --help --version" -- "$cur"))
        return 0
    fi
    cmd=${COMP_WORDS[1]}
    case "$prev" in
    --format)
        COMPREPLY=($(compgen -W "$(_rigmat_formats "$cmd")" -- "$cur"))
        return 0 ;;
    --method)
        COMPREPLY=($(compgen -W "zoh foh tustin euler backward-euler" -- "$cur"))
        return 0 ;;
    --ctype)
        COMPREPLY=($(compgen -W "double float" -- "$cur"))
        return 0 ;;
    --model)
        if [ "$cmd" = simulate ]; then
            COMPREPLY=($(compgen -W "nonlinear linear sampled" -- "$cur"))
        fi
        return 0 ;;
    --weights | --partial)
        COMPREPLY=($(compgen -f -- "$cur"))
        return 0 ;;
    --plot)
        COMPREPLY=($(compgen -f -X '!*.svg' -- "$cur") $(compgen -d -- "$cur"))
        return 0 ;;
    --catalog)
        COMPREPLY=($(compgen -d -- "$cur"))
        return 0 ;;
    -o | --output)
        if [ "$cmd" = firmware ]; then
            COMPREPLY=($(compgen -d -- "$cur"))
        else
            COMPREPLY=($(compgen -f -- "$cur"))
        fi
        return 0 ;;
    --rate | --period | --prewarp | --delay | --set | --name | --vary | --threads | --offset | \
        --input | --duration | --step | --tolerance | --criterion | --horizon | --step-size)
        return 0 ;;
    esac
    case "$cur" in
    -*)
        COMPREPLY=($(compgen -W "$(_rigmat_options "$cmd")" -- "$cur")) ;;
    *)
        if [ "$cmd" = parts ]; then
            return 0
        fi
        COMPREPLY=($(compgen -f -X '!*.y*ml' -- "$cur") $(compgen -d -- "$cur")) ;;
    esac
    return 0
}
complete -F _rigmat rigmat

; Inno Setup script for the Windows installer (written, not yet run: see README "Platforms").
; Build the bundle first (bash installer/build-bundle.sh, which also writes build\icons), then:
;   iscc /DAppVersion=0.1.0 installer\windows\loadledger.iss
; Writes dist\loadledger-VERSION-windows-setup.exe. It installs for the current user without
; administrator rights (or for everyone when run as administrator), adds Start-menu entries,
; and opens .loadledger project files with Loadledger.

#ifndef AppVersion
  #define AppVersion "0.0.0"
#endif

[Setup]
AppId={{6B0F3E52-7C1A-4D8E-9B43-2F6A51C0D7E9}
AppName=Loadledger
AppVersion={#AppVersion}
AppPublisher=Loadledger
AppComments=Meter data to an energy budget with an honest range
DefaultDirName={autopf}\Loadledger
DefaultGroupName=Loadledger
DisableProgramGroupPage=yes
PrivilegesRequired=lowest
PrivilegesRequiredOverridesAllowed=dialog
ArchitecturesAllowed=x64compatible
ArchitecturesInstallIn64BitMode=x64compatible
ChangesAssociations=yes
OutputDir=..\..\dist
OutputBaseFilename=loadledger-{#AppVersion}-windows-setup
SetupIconFile=..\..\build\icons\loadledger.ico
UninstallDisplayIcon={app}\loadledgerw.exe
Compression=lzma2
SolidCompression=yes
WizardStyle=modern

[Files]
; loadledger.exe is the command line (a console program); loadledgerw.exe opens the window
Source: "..\..\dist\loadledger\*"; DestDir: "{app}"; Flags: recursesubdirs createallsubdirs ignoreversion

[Icons]
Name: "{group}\Loadledger"; Filename: "{app}\loadledgerw.exe"; Comment: "Meter data to an energy budget"
Name: "{group}\Loadledger sample campus"; Filename: "{app}\sample"
Name: "{group}\Uninstall Loadledger"; Filename: "{uninstallexe}"

[Registry]
; .loadledger files open in the window (HKA: the user's or the machine's classes, as installed)
Root: HKA; Subkey: "Software\Classes\.loadledger"; ValueType: string; ValueName: ""; ValueData: "Loadledger.Project"; Flags: uninsdeletevalue
Root: HKA; Subkey: "Software\Classes\Loadledger.Project"; ValueType: string; ValueName: ""; ValueData: "Loadledger project"; Flags: uninsdeletekey
Root: HKA; Subkey: "Software\Classes\Loadledger.Project\DefaultIcon"; ValueType: string; ValueName: ""; ValueData: "{app}\loadledgerw.exe,0"
Root: HKA; Subkey: "Software\Classes\Loadledger.Project\shell\open\command"; ValueType: string; ValueName: ""; ValueData: """{app}\loadledgerw.exe"" --project ""%1"""

[Run]
Filename: "{app}\loadledgerw.exe"; Description: "Open Loadledger now"; Flags: nowait postinstall skipifsilent
